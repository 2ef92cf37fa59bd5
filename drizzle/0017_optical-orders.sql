CREATE TYPE "public"."order_kind" AS ENUM('spectacles', 'contact_lenses');--> statement-breakpoint
CREATE TYPE "public"."order_message_kind" AS ENUM('lab_order', 'patient_ready');--> statement-breakpoint
CREATE TYPE "public"."order_message_status" AS ENUM('queued', 'sent', 'skipped', 'failed');--> statement-breakpoint
CREATE TYPE "public"."order_state" AS ENUM('draft', 'sent_to_lab', 'received', 'checked', 'ready_to_collect', 'collected', 'remake', 'cancelled');--> statement-breakpoint
CREATE TYPE "public"."spectacle_lens_type" AS ENUM('single_vision', 'bifocal', 'varifocal', 'occupational');--> statement-breakpoint
CREATE TABLE "frames" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"supplier" text NOT NULL,
	"model" text NOT NULL,
	"colour" text NOT NULL,
	"size" text NOT NULL,
	"price_minor" integer NOT NULL,
	"quantity" integer DEFAULT 0 NOT NULL,
	"active" boolean DEFAULT true NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "frames_quantity_nonneg" CHECK ("frames"."quantity" >= 0),
	CONSTRAINT "frames_price_nonneg" CHECK ("frames"."price_minor" >= 0)
);
--> statement-breakpoint
CREATE TABLE "labs" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"name" text NOT NULL,
	"email" text NOT NULL,
	"phone" text DEFAULT '' NOT NULL,
	"account_ref" text DEFAULT '' NOT NULL,
	"active" boolean DEFAULT true NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "optical_orders" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"number" integer GENERATED ALWAYS AS IDENTITY (sequence name "optical_orders_number_seq" INCREMENT BY 1 MINVALUE 1 MAXVALUE 2147483647 START WITH 1 CACHE 1),
	"kind" "order_kind" NOT NULL,
	"state" "order_state" DEFAULT 'draft' NOT NULL,
	"patient_id" uuid NOT NULL,
	"prescription_id" uuid NOT NULL,
	"lab_id" uuid NOT NULL,
	"frame_id" uuid,
	"frame_label" text,
	"frame_price_minor" integer,
	"lens_type" "spectacle_lens_type",
	"lens_material" text,
	"coatings" text[] DEFAULT '{}'::text[] NOT NULL,
	"tint" text DEFAULT '' NOT NULL,
	"pd_right_mm" double precision,
	"pd_left_mm" double precision,
	"height_right_mm" double precision,
	"height_left_mm" double precision,
	"boxes_right" integer,
	"boxes_left" integer,
	"lens_fee_item_id" uuid,
	"notes" text DEFAULT '' NOT NULL,
	"invoice_id" uuid,
	"override_reason" text,
	"created_by_id" uuid,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"state_changed_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "optical_orders_spectacles_complete" CHECK ("optical_orders"."kind" <> 'spectacles' or ("optical_orders"."frame_id" is not null and "optical_orders"."lens_type" is not null and "optical_orders"."lens_material" is not null and "optical_orders"."pd_right_mm" between 20 and 45 and "optical_orders"."pd_left_mm" between 20 and 45)),
	CONSTRAINT "optical_orders_cl_complete" CHECK ("optical_orders"."kind" <> 'contact_lenses' or ("optical_orders"."boxes_right" between 0 and 24 and "optical_orders"."boxes_left" between 0 and 24 and "optical_orders"."boxes_right" + "optical_orders"."boxes_left" > 0)),
	CONSTRAINT "optical_orders_heights" CHECK (("optical_orders"."height_right_mm" is null or "optical_orders"."height_right_mm" between 5 and 45) and ("optical_orders"."height_left_mm" is null or "optical_orders"."height_left_mm" between 5 and 45))
);
--> statement-breakpoint
CREATE TABLE "order_checks" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"order_id" uuid NOT NULL,
	"standard" text NOT NULL,
	"readings" jsonb NOT NULL,
	"report" jsonb NOT NULL,
	"pass" boolean NOT NULL,
	"checked_by_id" uuid,
	"at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "order_events" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"order_id" uuid NOT NULL,
	"kind" "order_kind" NOT NULL,
	"from_state" "order_state",
	"to_state" "order_state" NOT NULL,
	"actor_user_id" uuid,
	"reason" text DEFAULT '' NOT NULL,
	"at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "order_messages" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"order_id" uuid NOT NULL,
	"kind" "order_message_kind" NOT NULL,
	"recipient" text,
	"status" "order_message_status" DEFAULT 'queued' NOT NULL,
	"skipped_reason" text,
	"attempts" integer DEFAULT 0 NOT NULL,
	"last_error" text,
	"sent_at" timestamp with time zone,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "order_transitions" (
	"kind" "order_kind" NOT NULL,
	"from_state" "order_state" NOT NULL,
	"to_state" "order_state" NOT NULL,
	CONSTRAINT "order_transitions_kind_from_state_to_state_pk" PRIMARY KEY("kind","from_state","to_state")
);
--> statement-breakpoint
ALTER TABLE "practice_settings" ADD COLUMN "lab_overdue_days" integer DEFAULT 10 NOT NULL;--> statement-breakpoint
ALTER TABLE "optical_orders" ADD CONSTRAINT "optical_orders_patient_id_patients_id_fk" FOREIGN KEY ("patient_id") REFERENCES "public"."patients"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "optical_orders" ADD CONSTRAINT "optical_orders_prescription_id_prescriptions_id_fk" FOREIGN KEY ("prescription_id") REFERENCES "public"."prescriptions"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "optical_orders" ADD CONSTRAINT "optical_orders_lab_id_labs_id_fk" FOREIGN KEY ("lab_id") REFERENCES "public"."labs"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "optical_orders" ADD CONSTRAINT "optical_orders_frame_id_frames_id_fk" FOREIGN KEY ("frame_id") REFERENCES "public"."frames"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "optical_orders" ADD CONSTRAINT "optical_orders_lens_fee_item_id_fee_items_id_fk" FOREIGN KEY ("lens_fee_item_id") REFERENCES "public"."fee_items"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "optical_orders" ADD CONSTRAINT "optical_orders_invoice_id_invoices_id_fk" FOREIGN KEY ("invoice_id") REFERENCES "public"."invoices"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "optical_orders" ADD CONSTRAINT "optical_orders_created_by_id_users_id_fk" FOREIGN KEY ("created_by_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "order_checks" ADD CONSTRAINT "order_checks_order_id_optical_orders_id_fk" FOREIGN KEY ("order_id") REFERENCES "public"."optical_orders"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "order_checks" ADD CONSTRAINT "order_checks_checked_by_id_users_id_fk" FOREIGN KEY ("checked_by_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "order_events" ADD CONSTRAINT "order_events_order_id_optical_orders_id_fk" FOREIGN KEY ("order_id") REFERENCES "public"."optical_orders"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "order_events" ADD CONSTRAINT "order_events_actor_user_id_users_id_fk" FOREIGN KEY ("actor_user_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "order_events" ADD CONSTRAINT "order_events_kind_from_state_to_state_order_transitions_kind_from_state_to_state_fk" FOREIGN KEY ("kind","from_state","to_state") REFERENCES "public"."order_transitions"("kind","from_state","to_state") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "order_messages" ADD CONSTRAINT "order_messages_order_id_optical_orders_id_fk" FOREIGN KEY ("order_id") REFERENCES "public"."optical_orders"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "optical_orders_state_idx" ON "optical_orders" USING btree ("state","state_changed_at");--> statement-breakpoint
CREATE INDEX "optical_orders_patient_idx" ON "optical_orders" USING btree ("patient_id","created_at");--> statement-breakpoint
CREATE INDEX "order_checks_order_idx" ON "order_checks" USING btree ("order_id","at");--> statement-breakpoint
CREATE INDEX "order_events_order_idx" ON "order_events" USING btree ("order_id","at");--> statement-breakpoint
CREATE INDEX "order_events_to_idx" ON "order_events" USING btree ("to_state","at");--> statement-breakpoint
CREATE INDEX "order_messages_order_idx" ON "order_messages" USING btree ("order_id","created_at");