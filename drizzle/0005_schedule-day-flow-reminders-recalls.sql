CREATE TYPE "public"."document_kind" AS ENUM('fundus_photo', 'field_printout', 'outside_record', 'other');--> statement-breakpoint
CREATE TYPE "public"."acuity_correction" AS ENUM('unaided', 'habitual', 'best');--> statement-breakpoint
CREATE TYPE "public"."acuity_distance" AS ENUM('distance', 'near');--> statement-breakpoint
CREATE TYPE "public"."colour_result" AS ENUM('normal', 'red_green', 'blue_yellow', 'inconclusive');--> statement-breakpoint
CREATE TYPE "public"."colour_test" AS ENUM('plates_38', 'plates_24', 'plates_other', 'arrangement', 'other');--> statement-breakpoint
CREATE TYPE "public"."eye" AS ENUM('right', 'left');--> statement-breakpoint
CREATE TYPE "public"."eye_or_both" AS ENUM('right', 'left', 'both');--> statement-breakpoint
CREATE TYPE "public"."field_method" AS ENUM('confrontation', 'amsler', 'automated');--> statement-breakpoint
CREATE TYPE "public"."iop_method" AS ENUM('goldmann', 'non_contact', 'rebound', 'handheld_applanation', 'other');--> statement-breakpoint
CREATE TYPE "public"."prism_base" AS ENUM('up', 'down', 'in', 'out');--> statement-breakpoint
CREATE TYPE "public"."refraction_kind" AS ENUM('habitual', 'autorefraction', 'retinoscopy', 'subjective', 'cycloplegic', 'final');--> statement-breakpoint
CREATE TYPE "public"."reliability" AS ENUM('good', 'fair', 'poor');--> statement-breakpoint
CREATE TYPE "public"."segment" AS ENUM('anterior', 'posterior');--> statement-breakpoint
CREATE TYPE "public"."prescription_kind" AS ENUM('spectacle', 'contact_lens');--> statement-breakpoint
CREATE TYPE "public"."appointment_message_kind" AS ENUM('confirmation', 'reminder', 'cancellation');--> statement-breakpoint
CREATE TYPE "public"."message_status" AS ENUM('queued', 'sent', 'skipped', 'failed');--> statement-breakpoint
CREATE TABLE "documents" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"patient_id" uuid NOT NULL,
	"exam_id" uuid,
	"kind" "document_kind" NOT NULL,
	"description" text DEFAULT '' NOT NULL,
	"original_name" text NOT NULL,
	"content_type" text NOT NULL,
	"size_bytes" integer NOT NULL,
	"storage_key" text NOT NULL,
	"thumbnail_key" text,
	"uploaded_by_id" uuid NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "documents_type" CHECK ("documents"."content_type" in ('image/jpeg', 'image/png', 'image/webp', 'application/pdf'))
);
--> statement-breakpoint
CREATE TABLE "exam_acuity" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"exam_id" uuid NOT NULL,
	"eye" "eye_or_both" NOT NULL,
	"distance" "acuity_distance" NOT NULL,
	"correction" "acuity_correction" NOT NULL,
	"notation" text NOT NULL,
	"log_mar" double precision NOT NULL,
	CONSTRAINT "exam_acuity_range" CHECK ("exam_acuity"."log_mar" between -0.5 and 3)
);
--> statement-breakpoint
CREATE TABLE "exam_addenda" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"exam_id" uuid NOT NULL,
	"author_id" uuid NOT NULL,
	"section" text NOT NULL,
	"body" text NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "exam_addenda_body" CHECK (length("exam_addenda"."body") > 0)
);
--> statement-breakpoint
CREATE TABLE "exam_assessment" (
	"exam_id" uuid PRIMARY KEY NOT NULL,
	"assessment" text DEFAULT '' NOT NULL,
	"plan" text DEFAULT '' NOT NULL,
	"recall_months" integer,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "exam_binocular" (
	"exam_id" uuid PRIMARY KEY NOT NULL,
	"cover_test_distance" text DEFAULT '' NOT NULL,
	"cover_test_near" text DEFAULT '' NOT NULL,
	"npc_cm" double precision,
	"stereo_test" text DEFAULT '' NOT NULL,
	"stereo_arc_sec" integer,
	"notes" text DEFAULT '' NOT NULL,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "exam_colour_vision" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"exam_id" uuid NOT NULL,
	"eye" "eye" NOT NULL,
	"test" "colour_test" NOT NULL,
	"plates_correct" integer,
	"plates_shown" integer,
	"result" "colour_result" NOT NULL,
	"notes" text DEFAULT '' NOT NULL,
	CONSTRAINT "exam_colour_plates" CHECK ("exam_colour_vision"."plates_correct" is null or ("exam_colour_vision"."plates_shown" is not null and "exam_colour_vision"."plates_correct" between 0 and "exam_colour_vision"."plates_shown"))
);
--> statement-breakpoint
CREATE TABLE "exam_diagnoses" (
	"exam_id" uuid NOT NULL,
	"code" text NOT NULL,
	"label" text NOT NULL,
	"eye" "eye_or_both" DEFAULT 'both' NOT NULL,
	CONSTRAINT "exam_diagnoses_exam_id_code_eye_pk" PRIMARY KEY("exam_id","code","eye"),
	CONSTRAINT "exam_diagnoses_code" CHECK ("exam_diagnoses"."code" ~ '^[A-Z][0-9]{2}(\.[0-9A-Z]{1,4})?$')
);
--> statement-breakpoint
CREATE TABLE "exam_history" (
	"exam_id" uuid PRIMARY KEY NOT NULL,
	"reason" text DEFAULT '' NOT NULL,
	"symptoms" text DEFAULT '' NOT NULL,
	"ocular_history" text DEFAULT '' NOT NULL,
	"general_history" text DEFAULT '' NOT NULL,
	"medications" text DEFAULT '' NOT NULL,
	"family_history" text DEFAULT '' NOT NULL,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "exam_iop" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"exam_id" uuid NOT NULL,
	"eye" "eye" NOT NULL,
	"mm_hg" double precision NOT NULL,
	"method" "iop_method" NOT NULL,
	"measured_time" time NOT NULL,
	CONSTRAINT "exam_iop_range" CHECK ("exam_iop"."mm_hg" between 1 and 80)
);
--> statement-breakpoint
CREATE TABLE "exam_refractions" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"exam_id" uuid NOT NULL,
	"kind" "refraction_kind" NOT NULL,
	"eye" "eye" NOT NULL,
	"raw_text" text NOT NULL,
	"sphere" double precision NOT NULL,
	"cylinder" double precision NOT NULL,
	"axis" integer NOT NULL,
	"add_power" double precision,
	"prism_dioptres" double precision,
	"prism_base" "prism_base",
	"vertex_mm" double precision,
	"va_notation" text,
	"va_log_mar" double precision,
	CONSTRAINT "exam_refractions_axis" CHECK ("exam_refractions"."axis" between 1 and 180),
	CONSTRAINT "exam_refractions_powers" CHECK (abs("exam_refractions"."sphere") <= 30 and abs("exam_refractions"."cylinder") <= 30),
	CONSTRAINT "exam_refractions_add" CHECK ("exam_refractions"."add_power" is null or "exam_refractions"."add_power" between 0.25 and 4),
	CONSTRAINT "exam_refractions_prism" CHECK (("exam_refractions"."prism_dioptres" is null) = ("exam_refractions"."prism_base" is null) and ("exam_refractions"."prism_dioptres" is null or "exam_refractions"."prism_dioptres" between 0.25 and 20)),
	CONSTRAINT "exam_refractions_vertex" CHECK ("exam_refractions"."vertex_mm" is null or "exam_refractions"."vertex_mm" between 0 and 25)
);
--> statement-breakpoint
CREATE TABLE "exam_segments" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"exam_id" uuid NOT NULL,
	"eye" "eye" NOT NULL,
	"segment" "segment" NOT NULL,
	"normal" jsonb DEFAULT '[]'::jsonb NOT NULL,
	"notes" text DEFAULT '' NOT NULL
);
--> statement-breakpoint
CREATE TABLE "exam_visual_fields" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"exam_id" uuid NOT NULL,
	"eye" "eye" NOT NULL,
	"method" "field_method" NOT NULL,
	"blind_spot_x_deg" double precision,
	"blind_spot_y_deg" double precision,
	"blind_spot_width_deg" double precision,
	"blind_spot_height_deg" double precision,
	"defect_present" boolean DEFAULT false NOT NULL,
	"defects" text DEFAULT '' NOT NULL,
	"reliability" "reliability",
	CONSTRAINT "exam_visual_fields_blind_spot" CHECK (("exam_visual_fields"."blind_spot_x_deg" is null and "exam_visual_fields"."blind_spot_y_deg" is null and "exam_visual_fields"."blind_spot_width_deg" is null and "exam_visual_fields"."blind_spot_height_deg" is null) or ("exam_visual_fields"."blind_spot_x_deg" is not null and "exam_visual_fields"."blind_spot_y_deg" is not null and "exam_visual_fields"."blind_spot_width_deg" > 0 and "exam_visual_fields"."blind_spot_height_deg" > 0))
);
--> statement-breakpoint
CREATE TABLE "prescription_eyes" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"prescription_id" uuid NOT NULL,
	"eye" "eye" NOT NULL,
	"sphere" double precision NOT NULL,
	"cylinder" double precision NOT NULL,
	"axis" integer NOT NULL,
	"add_power" double precision,
	"prism_dioptres" double precision,
	"prism_base" "prism_base",
	"vertex_mm" double precision,
	"exact_sphere" double precision,
	"exact_cylinder" double precision,
	"exact_axis" integer,
	"spectacle_sphere" double precision,
	"spectacle_cylinder" double precision,
	"spectacle_axis" integer,
	"base_curve_mm" double precision,
	"diameter_mm" double precision,
	CONSTRAINT "prescription_eyes_axis" CHECK ("prescription_eyes"."axis" between 1 and 180)
);
--> statement-breakpoint
CREATE TABLE "prescriptions" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"patient_id" uuid NOT NULL,
	"exam_id" uuid NOT NULL,
	"kind" "prescription_kind" NOT NULL,
	"issued_by_id" uuid NOT NULL,
	"issued_at" timestamp with time zone DEFAULT now() NOT NULL,
	"expires_on" date NOT NULL,
	"prescriber_name" text NOT NULL,
	"prescriber_licence" text NOT NULL,
	"notes" text DEFAULT '' NOT NULL,
	"lens_name" text
);
--> statement-breakpoint
CREATE TABLE "appointment_messages" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"appointment_id" uuid NOT NULL,
	"kind" "appointment_message_kind" NOT NULL,
	"status" "message_status" DEFAULT 'queued' NOT NULL,
	"recipient" text,
	"due_at" timestamp with time zone DEFAULT now() NOT NULL,
	"attempts" integer DEFAULT 0 NOT NULL,
	"last_error" text,
	"skipped_reason" text,
	"sent_at" timestamp with time zone,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "appointment_status_changes" (
	"id" bigint PRIMARY KEY GENERATED ALWAYS AS IDENTITY (sequence name "appointment_status_changes_id_seq" INCREMENT BY 1 MINVALUE 1 MAXVALUE 9223372036854775807 START WITH 1 CACHE 1),
	"appointment_id" uuid NOT NULL,
	"from_status" "appointment_status",
	"to_status" "appointment_status" NOT NULL,
	"changed_by_id" uuid,
	"changed_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "provider_breaks" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"provider_id" uuid NOT NULL,
	"weekday" integer NOT NULL,
	"start_minute" integer NOT NULL,
	"end_minute" integer NOT NULL,
	"label" text DEFAULT 'Break' NOT NULL,
	CONSTRAINT "provider_breaks_weekday" CHECK ("provider_breaks"."weekday" between 1 and 7),
	CONSTRAINT "provider_breaks_span" CHECK ("provider_breaks"."start_minute" >= 0 and "provider_breaks"."end_minute" <= 1440 and "provider_breaks"."end_minute" > "provider_breaks"."start_minute")
);
--> statement-breakpoint
CREATE TABLE "recall_batches" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"created_by_id" uuid,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"total" integer DEFAULT 0 NOT NULL
);
--> statement-breakpoint
CREATE TABLE "recall_messages" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"batch_id" uuid NOT NULL,
	"patient_id" uuid NOT NULL,
	"due_date" date NOT NULL,
	"status" "message_status" DEFAULT 'queued' NOT NULL,
	"recipient" text,
	"attempts" integer DEFAULT 0 NOT NULL,
	"last_error" text,
	"skipped_reason" text,
	"sent_at" timestamp with time zone,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "working_hours" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"provider_id" uuid NOT NULL,
	"weekday" integer NOT NULL,
	"start_minute" integer NOT NULL,
	"end_minute" integer NOT NULL,
	CONSTRAINT "working_hours_weekday" CHECK ("working_hours"."weekday" between 1 and 7),
	CONSTRAINT "working_hours_span" CHECK ("working_hours"."start_minute" >= 0 and "working_hours"."end_minute" <= 1440 and "working_hours"."end_minute" > "working_hours"."start_minute")
);
--> statement-breakpoint
ALTER TABLE "practice_settings" ADD COLUMN "recall_months_child" integer DEFAULT 12 NOT NULL;--> statement-breakpoint
ALTER TABLE "practice_settings" ADD COLUMN "recall_months_adult" integer DEFAULT 24 NOT NULL;--> statement-breakpoint
ALTER TABLE "practice_settings" ADD COLUMN "child_under_years" integer DEFAULT 16 NOT NULL;--> statement-breakpoint
ALTER TABLE "practice_settings" ADD COLUMN "reminder_hours_before" integer DEFAULT 24 NOT NULL;--> statement-breakpoint
ALTER TABLE "appointment_types" ADD COLUMN "performer_roles" "role"[] DEFAULT '{owner,optometrist}'::role[] NOT NULL;--> statement-breakpoint
ALTER TABLE "appointment_types" ADD COLUMN "routine_exam" boolean DEFAULT true NOT NULL;--> statement-breakpoint
ALTER TABLE "appointments" ADD COLUMN "status_changed_at" timestamp with time zone DEFAULT now() NOT NULL;--> statement-breakpoint
ALTER TABLE "appointments" ADD COLUMN "status_changed_by_id" uuid;--> statement-breakpoint
ALTER TABLE "appointments" ADD COLUMN "revision" integer DEFAULT 0 NOT NULL;--> statement-breakpoint
ALTER TABLE "documents" ADD CONSTRAINT "documents_patient_id_patients_id_fk" FOREIGN KEY ("patient_id") REFERENCES "public"."patients"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "documents" ADD CONSTRAINT "documents_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "documents" ADD CONSTRAINT "documents_uploaded_by_id_users_id_fk" FOREIGN KEY ("uploaded_by_id") REFERENCES "public"."users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_acuity" ADD CONSTRAINT "exam_acuity_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_addenda" ADD CONSTRAINT "exam_addenda_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_addenda" ADD CONSTRAINT "exam_addenda_author_id_users_id_fk" FOREIGN KEY ("author_id") REFERENCES "public"."users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_assessment" ADD CONSTRAINT "exam_assessment_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_binocular" ADD CONSTRAINT "exam_binocular_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_colour_vision" ADD CONSTRAINT "exam_colour_vision_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_diagnoses" ADD CONSTRAINT "exam_diagnoses_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_history" ADD CONSTRAINT "exam_history_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_iop" ADD CONSTRAINT "exam_iop_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_refractions" ADD CONSTRAINT "exam_refractions_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_segments" ADD CONSTRAINT "exam_segments_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_visual_fields" ADD CONSTRAINT "exam_visual_fields_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "prescription_eyes" ADD CONSTRAINT "prescription_eyes_prescription_id_prescriptions_id_fk" FOREIGN KEY ("prescription_id") REFERENCES "public"."prescriptions"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "prescriptions" ADD CONSTRAINT "prescriptions_patient_id_patients_id_fk" FOREIGN KEY ("patient_id") REFERENCES "public"."patients"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "prescriptions" ADD CONSTRAINT "prescriptions_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "prescriptions" ADD CONSTRAINT "prescriptions_issued_by_id_users_id_fk" FOREIGN KEY ("issued_by_id") REFERENCES "public"."users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "appointment_messages" ADD CONSTRAINT "appointment_messages_appointment_id_appointments_id_fk" FOREIGN KEY ("appointment_id") REFERENCES "public"."appointments"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "appointment_status_changes" ADD CONSTRAINT "appointment_status_changes_appointment_id_appointments_id_fk" FOREIGN KEY ("appointment_id") REFERENCES "public"."appointments"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "appointment_status_changes" ADD CONSTRAINT "appointment_status_changes_changed_by_id_users_id_fk" FOREIGN KEY ("changed_by_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "provider_breaks" ADD CONSTRAINT "provider_breaks_provider_id_users_id_fk" FOREIGN KEY ("provider_id") REFERENCES "public"."users"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "recall_batches" ADD CONSTRAINT "recall_batches_created_by_id_users_id_fk" FOREIGN KEY ("created_by_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "recall_messages" ADD CONSTRAINT "recall_messages_batch_id_recall_batches_id_fk" FOREIGN KEY ("batch_id") REFERENCES "public"."recall_batches"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "recall_messages" ADD CONSTRAINT "recall_messages_patient_id_patients_id_fk" FOREIGN KEY ("patient_id") REFERENCES "public"."patients"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "working_hours" ADD CONSTRAINT "working_hours_provider_id_users_id_fk" FOREIGN KEY ("provider_id") REFERENCES "public"."users"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "documents_patient_idx" ON "documents" USING btree ("patient_id","created_at");--> statement-breakpoint
CREATE INDEX "documents_exam_idx" ON "documents" USING btree ("exam_id");--> statement-breakpoint
CREATE UNIQUE INDEX "exam_acuity_uq" ON "exam_acuity" USING btree ("exam_id","eye","distance","correction");--> statement-breakpoint
CREATE INDEX "exam_addenda_exam_idx" ON "exam_addenda" USING btree ("exam_id","created_at");--> statement-breakpoint
CREATE UNIQUE INDEX "exam_colour_vision_uq" ON "exam_colour_vision" USING btree ("exam_id","eye");--> statement-breakpoint
CREATE UNIQUE INDEX "exam_iop_uq" ON "exam_iop" USING btree ("exam_id","eye");--> statement-breakpoint
CREATE UNIQUE INDEX "exam_refractions_uq" ON "exam_refractions" USING btree ("exam_id","kind","eye");--> statement-breakpoint
CREATE UNIQUE INDEX "exam_segments_uq" ON "exam_segments" USING btree ("exam_id","eye","segment");--> statement-breakpoint
CREATE UNIQUE INDEX "exam_visual_fields_uq" ON "exam_visual_fields" USING btree ("exam_id","eye");--> statement-breakpoint
CREATE UNIQUE INDEX "prescription_eyes_uq" ON "prescription_eyes" USING btree ("prescription_id","eye");--> statement-breakpoint
CREATE INDEX "prescriptions_patient_idx" ON "prescriptions" USING btree ("patient_id","issued_at");--> statement-breakpoint
CREATE INDEX "prescriptions_exam_idx" ON "prescriptions" USING btree ("exam_id");--> statement-breakpoint
CREATE UNIQUE INDEX "appointment_messages_appt_kind_uq" ON "appointment_messages" USING btree ("appointment_id","kind");--> statement-breakpoint
CREATE INDEX "appointment_messages_created_idx" ON "appointment_messages" USING btree ("created_at");--> statement-breakpoint
CREATE INDEX "appointment_status_changes_appt_idx" ON "appointment_status_changes" USING btree ("appointment_id","changed_at");--> statement-breakpoint
CREATE INDEX "provider_breaks_provider_idx" ON "provider_breaks" USING btree ("provider_id","weekday");--> statement-breakpoint
CREATE UNIQUE INDEX "recall_messages_patient_due_uq" ON "recall_messages" USING btree ("patient_id","due_date");--> statement-breakpoint
CREATE INDEX "recall_messages_batch_idx" ON "recall_messages" USING btree ("batch_id");--> statement-breakpoint
CREATE UNIQUE INDEX "working_hours_provider_day_uq" ON "working_hours" USING btree ("provider_id","weekday");--> statement-breakpoint
ALTER TABLE "appointments" ADD CONSTRAINT "appointments_status_changed_by_id_users_id_fk" FOREIGN KEY ("status_changed_by_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exams" ADD CONSTRAINT "exams_signed_consistent" CHECK (("exams"."status" = 'signed') = ("exams"."signed_at" is not null and "exams"."signed_by_id" is not null));--> statement-breakpoint
ALTER TABLE "appointment_types" ADD CONSTRAINT "appointment_types_recall_months" CHECK ("appointment_types"."recall_months" is null or "appointment_types"."recall_months" between 1 and 120);