ALTER TABLE "documents" ADD COLUMN "reviewed_at" timestamp with time zone;--> statement-breakpoint
ALTER TABLE "documents" ADD COLUMN "reviewed_by_id" uuid;--> statement-breakpoint
ALTER TABLE "patients" ADD COLUMN "guardian_name" text DEFAULT '' NOT NULL;--> statement-breakpoint
ALTER TABLE "patients" ADD COLUMN "guardian_relationship" text DEFAULT '' NOT NULL;--> statement-breakpoint
ALTER TABLE "patients" ADD COLUMN "guardian_phone" text DEFAULT '' NOT NULL;--> statement-breakpoint
ALTER TABLE "patients" ADD COLUMN "guardian_email" text DEFAULT '' NOT NULL;--> statement-breakpoint
ALTER TABLE "documents" ADD CONSTRAINT "documents_reviewed_by_id_users_id_fk" FOREIGN KEY ("reviewed_by_id") REFERENCES "public"."users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "documents_unreviewed_idx" ON "documents" USING btree ("created_at") WHERE "documents"."reviewed_at" is null;--> statement-breakpoint
ALTER TABLE "documents" ADD CONSTRAINT "documents_reviewed" CHECK (("documents"."reviewed_at" is null) = ("documents"."reviewed_by_id" is null));