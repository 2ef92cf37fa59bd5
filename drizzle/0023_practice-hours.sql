CREATE TYPE "public"."closure_kind" AS ENUM('bank_holiday', 'practice', 'leave');--> statement-breakpoint
CREATE TABLE "closures" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"kind" "closure_kind" NOT NULL,
	"site_id" uuid,
	"provider_id" uuid,
	"starts_on" date NOT NULL,
	"ends_on" date NOT NULL,
	"reason" text NOT NULL,
	"created_by_id" uuid,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "closures_range" CHECK ("closures"."ends_on" >= "closures"."starts_on"),
	CONSTRAINT "closures_leave_names_provider" CHECK (("closures"."kind" = 'leave') = ("closures"."provider_id" is not null)),
	CONSTRAINT "closures_reason" CHECK (length("closures"."reason") between 1 and 120)
);
--> statement-breakpoint
ALTER TABLE "closures" ADD CONSTRAINT "closures_site_id_sites_id_fk" FOREIGN KEY ("site_id") REFERENCES "public"."sites"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "closures" ADD CONSTRAINT "closures_provider_id_users_id_fk" FOREIGN KEY ("provider_id") REFERENCES "public"."users"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "closures" ADD CONSTRAINT "closures_created_by_id_users_id_fk" FOREIGN KEY ("created_by_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "closures_dates_idx" ON "closures" USING btree ("starts_on","ends_on");--> statement-breakpoint
CREATE UNIQUE INDEX "closures_bank_holiday_uq" ON "closures" USING btree ("starts_on") WHERE "closures"."kind" = 'bank_holiday' and "closures"."site_id" is null;