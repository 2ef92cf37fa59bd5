CREATE TYPE "public"."referral_delivery" AS ENUM('email', 'post', 'fax');--> statement-breakpoint
CREATE TYPE "public"."referral_message_kind" AS ENUM('letter', 'chase', 'reply_notice');--> statement-breakpoint
CREATE TYPE "public"."referral_message_status" AS ENUM('queued', 'sent', 'failed');--> statement-breakpoint
CREATE TYPE "public"."referral_status" AS ENUM('draft', 'queued', 'sent', 'acknowledged', 'replied', 'withdrawn');--> statement-breakpoint
CREATE TYPE "public"."referral_urgency" AS ENUM('routine', 'soon', 'urgent', 'same_day');--> statement-breakpoint
CREATE TABLE "referral_attachments" (
	"referral_id" uuid NOT NULL,
	"document_id" uuid NOT NULL,
	"position" integer DEFAULT 0 NOT NULL
);
--> statement-breakpoint
CREATE TABLE "referral_events" (
	"id" bigint PRIMARY KEY GENERATED ALWAYS AS IDENTITY (sequence name "referral_events_id_seq" INCREMENT BY 1 MINVALUE 1 MAXVALUE 9223372036854775807 START WITH 1 CACHE 1),
	"referral_id" uuid NOT NULL,
	"kind" text NOT NULL,
	"actor_user_id" uuid,
	"actor_name" text,
	"detail" jsonb,
	"at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "referral_links" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"referral_id" uuid NOT NULL,
	"expires_at" timestamp with time zone NOT NULL,
	"revoked_at" timestamp with time zone,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"last_opened_at" timestamp with time zone
);
--> statement-breakpoint
CREATE TABLE "referral_messages" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"referral_id" uuid NOT NULL,
	"kind" "referral_message_kind" NOT NULL,
	"status" "referral_message_status" DEFAULT 'queued' NOT NULL,
	"recipient" text NOT NULL,
	"link_id" uuid,
	"attempts" integer DEFAULT 0 NOT NULL,
	"last_error" text,
	"sent_at" timestamp with time zone,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "referral_recipients" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"name" text NOT NULL,
	"clinic" text DEFAULT '' NOT NULL,
	"specialty" text DEFAULT '' NOT NULL,
	"email" text,
	"phone" text DEFAULT '' NOT NULL,
	"address_line1" text DEFAULT '' NOT NULL,
	"address_line2" text DEFAULT '' NOT NULL,
	"city" text DEFAULT '' NOT NULL,
	"postcode" text DEFAULT '' NOT NULL,
	"preferred_delivery" "referral_delivery" DEFAULT 'email' NOT NULL,
	"notes" text DEFAULT '' NOT NULL,
	"active" boolean DEFAULT true NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "referral_recipients_email_needed" CHECK ("referral_recipients"."preferred_delivery" <> 'email' or "referral_recipients"."email" is not null)
);
--> statement-breakpoint
CREATE TABLE "referral_replies" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"referral_id" uuid NOT NULL,
	"patient_id" uuid NOT NULL,
	"author_name" text NOT NULL,
	"body" text DEFAULT '' NOT NULL,
	"file_name" text,
	"file_type" text,
	"file_key" text,
	"file_size" integer,
	"read_at" timestamp with time zone,
	"read_by_id" uuid,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "referral_replies_content" CHECK (length("referral_replies"."body") > 0 or "referral_replies"."file_key" is not null),
	CONSTRAINT "referral_replies_file_type" CHECK ("referral_replies"."file_type" is null or "referral_replies"."file_type" in ('application/pdf', 'image/jpeg', 'image/png'))
);
--> statement-breakpoint
CREATE TABLE "referrals" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"patient_id" uuid NOT NULL,
	"exam_id" uuid NOT NULL,
	"recipient_id" uuid,
	"created_by_id" uuid NOT NULL,
	"status" "referral_status" DEFAULT 'draft' NOT NULL,
	"urgency" "referral_urgency" DEFAULT 'routine' NOT NULL,
	"reason" text DEFAULT '' NOT NULL,
	"body" text DEFAULT '' NOT NULL,
	"relevant_history" text DEFAULT '' NOT NULL,
	"additional_findings" text DEFAULT '' NOT NULL,
	"selected_findings" jsonb DEFAULT '[]'::jsonb NOT NULL,
	"snapshot" jsonb NOT NULL,
	"time_frame_days" integer,
	"queued_at" timestamp with time zone,
	"sent_at" timestamp with time zone,
	"acknowledged_at" timestamp with time zone,
	"acknowledged_by" text,
	"appointment_on" date,
	"replied_at" timestamp with time zone,
	"last_chased_at" timestamp with time zone,
	"withdrawn_at" timestamp with time zone,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "referrals_sent_has_recipient" CHECK ("referrals"."status" = 'draft' or "referrals"."recipient_id" is not null),
	CONSTRAINT "referrals_sent_at" CHECK ("referrals"."status" not in ('sent', 'acknowledged', 'replied') or "referrals"."sent_at" is not null),
	CONSTRAINT "referrals_time_frame" CHECK ("referrals"."time_frame_days" is null or "referrals"."time_frame_days" between 0 and 730)
);
--> statement-breakpoint
ALTER TABLE "practice_settings" ADD COLUMN "referral_days_same_day" integer DEFAULT 1 NOT NULL;--> statement-breakpoint
ALTER TABLE "practice_settings" ADD COLUMN "referral_days_urgent" integer DEFAULT 7 NOT NULL;--> statement-breakpoint
ALTER TABLE "practice_settings" ADD COLUMN "referral_days_soon" integer DEFAULT 28 NOT NULL;--> statement-breakpoint
ALTER TABLE "practice_settings" ADD COLUMN "referral_days_routine" integer DEFAULT 91 NOT NULL;--> statement-breakpoint
ALTER TABLE "referral_attachments" ADD CONSTRAINT "referral_attachments_referral_id_referrals_id_fk" FOREIGN KEY ("referral_id") REFERENCES "public"."referrals"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "referral_attachments" ADD CONSTRAINT "referral_attachments_document_id_documents_id_fk" FOREIGN KEY ("document_id") REFERENCES "public"."documents"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "referral_events" ADD CONSTRAINT "referral_events_referral_id_referrals_id_fk" FOREIGN KEY ("referral_id") REFERENCES "public"."referrals"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "referral_events" ADD CONSTRAINT "referral_events_actor_user_id_users_id_fk" FOREIGN KEY ("actor_user_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "referral_links" ADD CONSTRAINT "referral_links_referral_id_referrals_id_fk" FOREIGN KEY ("referral_id") REFERENCES "public"."referrals"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "referral_messages" ADD CONSTRAINT "referral_messages_referral_id_referrals_id_fk" FOREIGN KEY ("referral_id") REFERENCES "public"."referrals"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "referral_messages" ADD CONSTRAINT "referral_messages_link_id_referral_links_id_fk" FOREIGN KEY ("link_id") REFERENCES "public"."referral_links"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "referral_replies" ADD CONSTRAINT "referral_replies_referral_id_referrals_id_fk" FOREIGN KEY ("referral_id") REFERENCES "public"."referrals"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "referral_replies" ADD CONSTRAINT "referral_replies_patient_id_patients_id_fk" FOREIGN KEY ("patient_id") REFERENCES "public"."patients"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "referral_replies" ADD CONSTRAINT "referral_replies_read_by_id_users_id_fk" FOREIGN KEY ("read_by_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "referrals" ADD CONSTRAINT "referrals_patient_id_patients_id_fk" FOREIGN KEY ("patient_id") REFERENCES "public"."patients"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "referrals" ADD CONSTRAINT "referrals_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "referrals" ADD CONSTRAINT "referrals_recipient_id_referral_recipients_id_fk" FOREIGN KEY ("recipient_id") REFERENCES "public"."referral_recipients"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "referrals" ADD CONSTRAINT "referrals_created_by_id_users_id_fk" FOREIGN KEY ("created_by_id") REFERENCES "public"."users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
CREATE UNIQUE INDEX "referral_attachments_uq" ON "referral_attachments" USING btree ("referral_id","document_id");--> statement-breakpoint
CREATE INDEX "referral_events_referral_idx" ON "referral_events" USING btree ("referral_id","at");--> statement-breakpoint
CREATE INDEX "referral_links_referral_idx" ON "referral_links" USING btree ("referral_id");--> statement-breakpoint
CREATE INDEX "referral_messages_referral_idx" ON "referral_messages" USING btree ("referral_id","created_at");--> statement-breakpoint
CREATE INDEX "referral_recipients_name_idx" ON "referral_recipients" USING btree ("name");--> statement-breakpoint
CREATE INDEX "referral_replies_patient_idx" ON "referral_replies" USING btree ("patient_id","created_at");--> statement-breakpoint
CREATE INDEX "referral_replies_referral_idx" ON "referral_replies" USING btree ("referral_id");--> statement-breakpoint
CREATE INDEX "referrals_status_idx" ON "referrals" USING btree ("status","created_at");--> statement-breakpoint
CREATE INDEX "referrals_patient_idx" ON "referrals" USING btree ("patient_id","created_at");--> statement-breakpoint
CREATE INDEX "referrals_exam_idx" ON "referrals" USING btree ("exam_id");