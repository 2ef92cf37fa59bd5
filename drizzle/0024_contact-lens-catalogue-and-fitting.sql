CREATE TYPE "public"."lens_replacement" AS ENUM('daily', 'two_weekly', 'monthly', 'quarterly', 'yearly');--> statement-breakpoint
CREATE TYPE "public"."prescription_statement" AS ENUM('none', 'not_needed', 'no_change');--> statement-breakpoint
CREATE TABLE "contact_lenses" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"manufacturer" text NOT NULL,
	"name" text NOT NULL,
	"material" text NOT NULL,
	"replacement" "lens_replacement" NOT NULL,
	"base_curves_mm" double precision[] NOT NULL,
	"diameters_mm" double precision[] NOT NULL,
	"sphere_min" double precision NOT NULL,
	"sphere_max" double precision NOT NULL,
	"sphere_step" double precision NOT NULL,
	"cylinders" double precision[] DEFAULT '{}'::double precision[] NOT NULL,
	"axis_step" integer,
	"active" boolean DEFAULT true NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "contact_lenses_sphere_range" CHECK ("contact_lenses"."sphere_min" < "contact_lenses"."sphere_max"),
	CONSTRAINT "contact_lenses_sphere_step" CHECK ("contact_lenses"."sphere_step" > 0),
	CONSTRAINT "contact_lenses_toric_axis" CHECK ((cardinality("contact_lenses"."cylinders") = 0 and "contact_lenses"."axis_step" is null) or (cardinality("contact_lenses"."cylinders") > 0 and "contact_lenses"."axis_step" between 1 and 90))
);
--> statement-breakpoint
CREATE TABLE "exam_contact_lens" (
	"exam_id" uuid NOT NULL,
	"section" text NOT NULL,
	"fields" jsonb NOT NULL,
	"data" jsonb NOT NULL,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "exam_contact_lens_exam_id_section_pk" PRIMARY KEY("exam_id","section"),
	CONSTRAINT "exam_contact_lens_section" CHECK ("exam_contact_lens"."section" in ('cl_fitting', 'cl_aftercare'))
);
--> statement-breakpoint
ALTER TABLE "prescription_eyes" ADD COLUMN "intermediate_add" double precision;--> statement-breakpoint
ALTER TABLE "prescription_eyes" ADD COLUMN "prism_horizontal" double precision;--> statement-breakpoint
ALTER TABLE "prescription_eyes" ADD COLUMN "prism_horizontal_base" "prism_base";--> statement-breakpoint
ALTER TABLE "prescription_eyes" ADD COLUMN "prism_vertical" double precision;--> statement-breakpoint
ALTER TABLE "prescription_eyes" ADD COLUMN "prism_vertical_base" "prism_base";--> statement-breakpoint
ALTER TABLE "prescription_eyes" ADD COLUMN "contact_lens_id" uuid;--> statement-breakpoint
ALTER TABLE "prescription_eyes" ADD COLUMN "lens_manufacturer" text;--> statement-breakpoint
ALTER TABLE "prescription_eyes" ADD COLUMN "lens_name" text;--> statement-breakpoint
ALTER TABLE "prescription_eyes" ADD COLUMN "lens_material" text;--> statement-breakpoint
ALTER TABLE "prescription_eyes" ADD COLUMN "lens_replacement" "lens_replacement";--> statement-breakpoint
ALTER TABLE "prescription_eyes" ADD COLUMN "pd_distance_mm" double precision;--> statement-breakpoint
ALTER TABLE "prescription_eyes" ADD COLUMN "pd_near_mm" double precision;--> statement-breakpoint
ALTER TABLE "prescriptions" ADD COLUMN "lens_use" text;--> statement-breakpoint
ALTER TABLE "prescriptions" ADD COLUMN "statement" "prescription_statement" DEFAULT 'none' NOT NULL;--> statement-breakpoint
ALTER TABLE "prescriptions" ADD COLUMN "referred" boolean DEFAULT false NOT NULL;--> statement-breakpoint
ALTER TABLE "exam_contact_lens" ADD CONSTRAINT "exam_contact_lens_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "prescription_eyes" ADD CONSTRAINT "prescription_eyes_contact_lens_id_contact_lenses_id_fk" FOREIGN KEY ("contact_lens_id") REFERENCES "public"."contact_lenses"("id") ON DELETE restrict ON UPDATE no action;