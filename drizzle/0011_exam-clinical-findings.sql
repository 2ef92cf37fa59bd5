CREATE TYPE "public"."ac_cells" AS ENUM('none', 'trace', '1+', '2+', '3+', '4+');--> statement-breakpoint
CREATE TYPE "public"."acuity_scale" AS ENUM('metric', 'feet', 'decimal', 'logmar', 'n_point', 'm_units', 'low_vision');--> statement-breakpoint
CREATE TYPE "public"."dilating_drug" AS ENUM('tropicamide', 'phenylephrine', 'cyclopentolate', 'other');--> statement-breakpoint
CREATE TYPE "public"."disc_margins" AS ENUM('distinct', 'blurred');--> statement-breakpoint
ALTER TYPE "public"."acuity_correction" ADD VALUE 'pinhole';--> statement-breakpoint
CREATE TABLE "exam_anterior_chamber" (
	"exam_id" uuid NOT NULL,
	"eye" "eye" NOT NULL,
	"van_herick" integer,
	"cells" "ac_cells",
	"hyphaema" boolean DEFAULT false NOT NULL,
	"hypopyon" boolean DEFAULT false NOT NULL,
	"notes" text DEFAULT '' NOT NULL,
	CONSTRAINT "exam_anterior_chamber_exam_id_eye_pk" PRIMARY KEY("exam_id","eye"),
	CONSTRAINT "exam_anterior_chamber_van_herick" CHECK ("exam_anterior_chamber"."van_herick" is null or "exam_anterior_chamber"."van_herick" between 0 and 4)
);
--> statement-breakpoint
CREATE TABLE "exam_corneal_thickness" (
	"exam_id" uuid NOT NULL,
	"eye" "eye" NOT NULL,
	"micrometres" integer NOT NULL,
	CONSTRAINT "exam_corneal_thickness_exam_id_eye_pk" PRIMARY KEY("exam_id","eye"),
	CONSTRAINT "exam_corneal_thickness_range" CHECK ("exam_corneal_thickness"."micrometres" between 300 and 800)
);
--> statement-breakpoint
CREATE TABLE "exam_countersignatures" (
	"exam_id" uuid NOT NULL,
	"clinician_id" uuid NOT NULL,
	"note" text DEFAULT '' NOT NULL,
	"signed_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "exam_countersignatures_exam_id_clinician_id_pk" PRIMARY KEY("exam_id","clinician_id")
);
--> statement-breakpoint
CREATE TABLE "exam_dilations" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"exam_id" uuid NOT NULL,
	"drug" "dilating_drug" NOT NULL,
	"other_drug" text DEFAULT '' NOT NULL,
	"strength_percent" double precision NOT NULL,
	"eye" "eye_or_both" NOT NULL,
	"instilled_at" timestamp with time zone NOT NULL,
	"batch" text DEFAULT '' NOT NULL,
	CONSTRAINT "exam_dilations_strength" CHECK ("exam_dilations"."strength_percent" > 0 and "exam_dilations"."strength_percent" <= 10)
);
--> statement-breakpoint
CREATE TABLE "exam_discs" (
	"exam_id" uuid NOT NULL,
	"eye" "eye" NOT NULL,
	"vertical_cd" double precision,
	"margins" "disc_margins",
	"swelling" boolean DEFAULT false NOT NULL,
	"haemorrhage" boolean DEFAULT false NOT NULL,
	"pallor" boolean DEFAULT false NOT NULL,
	"notes" text DEFAULT '' NOT NULL,
	CONSTRAINT "exam_discs_exam_id_eye_pk" PRIMARY KEY("exam_id","eye"),
	CONSTRAINT "exam_discs_cd" CHECK ("exam_discs"."vertical_cd" is null or "exam_discs"."vertical_cd" between 0 and 1)
);
--> statement-breakpoint
CREATE TABLE "exam_fundus" (
	"exam_id" uuid NOT NULL,
	"eye" "eye" NOT NULL,
	"vitreous_detachment" boolean DEFAULT false NOT NULL,
	"vitreous_pigment" boolean DEFAULT false NOT NULL,
	"retinal_break" boolean DEFAULT false NOT NULL,
	"retinal_detachment" boolean DEFAULT false NOT NULL,
	"drusen" boolean DEFAULT false NOT NULL,
	"suspected_wet_amd" boolean DEFAULT false NOT NULL,
	"macula_notes" text DEFAULT '' NOT NULL,
	"periphery_notes" text DEFAULT '' NOT NULL,
	CONSTRAINT "exam_fundus_exam_id_eye_pk" PRIMARY KEY("exam_id","eye")
);
--> statement-breakpoint
CREATE TABLE "exam_pupils" (
	"exam_id" uuid NOT NULL,
	"eye" "eye" NOT NULL,
	"equal_reactive" boolean DEFAULT false NOT NULL,
	"rapd" boolean DEFAULT false NOT NULL,
	"larger" boolean DEFAULT false NOT NULL,
	"size_mm" double precision,
	"notes" text DEFAULT '' NOT NULL,
	CONSTRAINT "exam_pupils_exam_id_eye_pk" PRIMARY KEY("exam_id","eye"),
	CONSTRAINT "exam_pupils_size" CHECK ("exam_pupils"."size_mm" is null or "exam_pupils"."size_mm" between 1 and 10)
);
--> statement-breakpoint
CREATE TABLE "exam_red_flags" (
	"exam_id" uuid PRIMARY KEY NOT NULL,
	"flashes" "eye_or_both",
	"new_floaters" "eye_or_both",
	"curtain" "eye_or_both",
	"sudden_loss" "eye_or_both",
	"severe_pain" "eye_or_both",
	"red_eye" "eye_or_both",
	"distortion" "eye_or_both",
	"new_diplopia" boolean DEFAULT false NOT NULL,
	"gca_symptoms" boolean DEFAULT false NOT NULL,
	"notes" text DEFAULT '' NOT NULL,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
DROP INDEX "exam_iop_uq";--> statement-breakpoint
ALTER TABLE "exam_acuity" ADD COLUMN "scale" "acuity_scale";--> statement-breakpoint
ALTER TABLE "exam_iop" ADD COLUMN "reading" integer DEFAULT 1 NOT NULL;--> statement-breakpoint
ALTER TABLE "exams" ADD COLUMN "triage" jsonb;--> statement-breakpoint
ALTER TABLE "exam_anterior_chamber" ADD CONSTRAINT "exam_anterior_chamber_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_corneal_thickness" ADD CONSTRAINT "exam_corneal_thickness_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_countersignatures" ADD CONSTRAINT "exam_countersignatures_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_countersignatures" ADD CONSTRAINT "exam_countersignatures_clinician_id_users_id_fk" FOREIGN KEY ("clinician_id") REFERENCES "public"."users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_dilations" ADD CONSTRAINT "exam_dilations_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_discs" ADD CONSTRAINT "exam_discs_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_fundus" ADD CONSTRAINT "exam_fundus_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_pupils" ADD CONSTRAINT "exam_pupils_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_red_flags" ADD CONSTRAINT "exam_red_flags_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "exam_dilations_exam_idx" ON "exam_dilations" USING btree ("exam_id","instilled_at");--> statement-breakpoint
CREATE UNIQUE INDEX "exam_iop_reading_uq" ON "exam_iop" USING btree ("exam_id","eye","reading");--> statement-breakpoint
ALTER TABLE "exam_iop" ADD CONSTRAINT "exam_iop_reading" CHECK ("exam_iop"."reading" between 1 and 6);