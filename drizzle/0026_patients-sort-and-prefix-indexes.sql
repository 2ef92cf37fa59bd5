DROP INDEX "patients_name_dob_idx";--> statement-breakpoint
DROP INDEX "patients_dob_idx";--> statement-breakpoint
DROP INDEX "patients_last_exam_idx";--> statement-breakpoint
CREATE INDEX "patients_name_dob_id_idx" ON "patients" USING btree ("last_name","first_name","date_of_birth","id");--> statement-breakpoint
CREATE INDEX "patients_dob_id_idx" ON "patients" USING btree ("date_of_birth","id");--> statement-breakpoint
CREATE INDEX "patients_last_exam_desc_idx" ON "patients" USING btree ("last_exam_at" DESC NULLS LAST,"id" DESC NULLS LAST);--> statement-breakpoint
CREATE INDEX "patients_surname_prefix_idx" ON "patients" USING btree (lower("last_name") collate "C",lower("first_name") collate "C","date_of_birth","id");