CREATE TYPE "public"."change_request_status" AS ENUM('open', 'done');--> statement-breakpoint
ALTER TYPE "public"."token_purpose" ADD VALUE 'sign_in';--> statement-breakpoint
CREATE TABLE "appointment_change_requests" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"appointment_id" uuid NOT NULL,
	"patient_id" uuid NOT NULL,
	"message" text NOT NULL,
	"status" "change_request_status" DEFAULT 'open' NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"handled_by_id" uuid,
	"handled_at" timestamp with time zone
);
--> statement-breakpoint
ALTER TABLE "patients" ADD COLUMN "recalls_by_email" boolean DEFAULT true NOT NULL;--> statement-breakpoint
ALTER TABLE "practice_settings" ADD COLUMN "portal_cancel_cutoff_hours" integer DEFAULT 24 NOT NULL;--> statement-breakpoint
ALTER TABLE "appointment_types" ADD COLUMN "online_booking" boolean DEFAULT false NOT NULL;--> statement-breakpoint
ALTER TABLE "appointment_change_requests" ADD CONSTRAINT "appointment_change_requests_appointment_id_appointments_id_fk" FOREIGN KEY ("appointment_id") REFERENCES "public"."appointments"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "appointment_change_requests" ADD CONSTRAINT "appointment_change_requests_patient_id_patients_id_fk" FOREIGN KEY ("patient_id") REFERENCES "public"."patients"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "appointment_change_requests" ADD CONSTRAINT "appointment_change_requests_handled_by_id_users_id_fk" FOREIGN KEY ("handled_by_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "appointment_change_requests_open_idx" ON "appointment_change_requests" USING btree ("status","created_at");--> statement-breakpoint
CREATE INDEX "appointment_change_requests_appointment_idx" ON "appointment_change_requests" USING btree ("appointment_id");