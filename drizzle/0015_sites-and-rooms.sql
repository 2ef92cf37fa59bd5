CREATE TABLE "rooms" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"site_id" uuid NOT NULL,
	"name" text NOT NULL,
	"active" boolean DEFAULT true NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "rooms_id_site_uq" UNIQUE("id","site_id")
);
--> statement-breakpoint
CREATE TABLE "site_opening_hours" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"site_id" uuid NOT NULL,
	"weekday" integer NOT NULL,
	"start_minute" integer NOT NULL,
	"end_minute" integer NOT NULL,
	CONSTRAINT "site_opening_hours_weekday" CHECK ("site_opening_hours"."weekday" between 1 and 7),
	CONSTRAINT "site_opening_hours_span" CHECK ("site_opening_hours"."start_minute" >= 0 and "site_opening_hours"."end_minute" <= 1440 and "site_opening_hours"."end_minute" > "site_opening_hours"."start_minute")
);
--> statement-breakpoint
CREATE TABLE "sites" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"name" text NOT NULL,
	"address_line1" text DEFAULT '' NOT NULL,
	"address_line2" text DEFAULT '' NOT NULL,
	"city" text DEFAULT '' NOT NULL,
	"postcode" text DEFAULT '' NOT NULL,
	"phone" text DEFAULT '' NOT NULL,
	"time_zone" text DEFAULT 'Europe/London' NOT NULL,
	"is_default" boolean DEFAULT false NOT NULL,
	"active" boolean DEFAULT true NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "sites_default_is_active" CHECK (not "sites"."is_default" or "sites"."active")
);
--> statement-breakpoint
-- The default site: where every row written without a site goes (the column defaults below).
-- An existing practice's details and its providers' working days carry over to it.
CREATE FUNCTION default_site_id() RETURNS uuid LANGUAGE sql STABLE AS $$ SELECT id FROM sites WHERE is_default $$;--> statement-breakpoint
INSERT INTO "sites" ("name", "address_line1", "address_line2", "city", "postcode", "phone", "time_zone", "is_default")
  SELECT p."name", p."address_line1", p."address_line2", p."city", p."postcode", p."phone", p."time_zone", true FROM "practice_settings" p WHERE p."id" = 1
  UNION ALL
  SELECT 'Main site', '', '', '', '', '', 'Europe/London', true WHERE NOT EXISTS (SELECT 1 FROM "practice_settings" WHERE "id" = 1);--> statement-breakpoint
INSERT INTO "site_opening_hours" ("site_id", "weekday", "start_minute", "end_minute")
  SELECT default_site_id(), "weekday", min("start_minute"), max("end_minute") FROM "working_hours" GROUP BY "weekday";--> statement-breakpoint
ALTER TABLE "invoices" ADD COLUMN "site_id" uuid DEFAULT default_site_id() NOT NULL;--> statement-breakpoint
ALTER TABLE "appointments" ADD COLUMN "site_id" uuid DEFAULT default_site_id() NOT NULL;--> statement-breakpoint
ALTER TABLE "appointments" ADD COLUMN "room_id" uuid;--> statement-breakpoint
ALTER TABLE "provider_breaks" ADD COLUMN "site_id" uuid DEFAULT default_site_id() NOT NULL;--> statement-breakpoint
ALTER TABLE "working_hours" ADD COLUMN "site_id" uuid DEFAULT default_site_id() NOT NULL;--> statement-breakpoint
ALTER TABLE "working_hours" ADD COLUMN "room_id" uuid;--> statement-breakpoint
ALTER TABLE "rooms" ADD CONSTRAINT "rooms_site_id_sites_id_fk" FOREIGN KEY ("site_id") REFERENCES "public"."sites"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "site_opening_hours" ADD CONSTRAINT "site_opening_hours_site_id_sites_id_fk" FOREIGN KEY ("site_id") REFERENCES "public"."sites"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
CREATE UNIQUE INDEX "rooms_site_name_uq" ON "rooms" USING btree ("site_id",lower("name"));--> statement-breakpoint
CREATE INDEX "rooms_site_idx" ON "rooms" USING btree ("site_id");--> statement-breakpoint
CREATE UNIQUE INDEX "site_opening_hours_site_day_uq" ON "site_opening_hours" USING btree ("site_id","weekday");--> statement-breakpoint
CREATE UNIQUE INDEX "sites_one_default_uq" ON "sites" USING btree ("is_default") WHERE "sites"."is_default";--> statement-breakpoint
CREATE UNIQUE INDEX "sites_name_uq" ON "sites" USING btree (lower("name"));--> statement-breakpoint
ALTER TABLE "invoices" ADD CONSTRAINT "invoices_site_id_sites_id_fk" FOREIGN KEY ("site_id") REFERENCES "public"."sites"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "appointments" ADD CONSTRAINT "appointments_site_id_sites_id_fk" FOREIGN KEY ("site_id") REFERENCES "public"."sites"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "appointments" ADD CONSTRAINT "appointments_room_at_site_fk" FOREIGN KEY ("room_id","site_id") REFERENCES "public"."rooms"("id","site_id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "provider_breaks" ADD CONSTRAINT "provider_breaks_site_id_sites_id_fk" FOREIGN KEY ("site_id") REFERENCES "public"."sites"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "working_hours" ADD CONSTRAINT "working_hours_site_id_sites_id_fk" FOREIGN KEY ("site_id") REFERENCES "public"."sites"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "working_hours" ADD CONSTRAINT "working_hours_room_at_site_fk" FOREIGN KEY ("room_id","site_id") REFERENCES "public"."rooms"("id","site_id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "invoices_site_idx" ON "invoices" USING btree ("site_id");--> statement-breakpoint
CREATE INDEX "appointments_site_start_idx" ON "appointments" USING btree ("site_id","starts_at");--> statement-breakpoint
-- No room double-booked, at any site: two live appointments in one room may not overlap.
ALTER TABLE "appointments" ADD CONSTRAINT "appointments_no_room_overlap"
  EXCLUDE USING gist ("room_id" WITH =, tstzrange("starts_at", "ends_at", '[)') WITH &&)
  WHERE ("room_id" IS NOT NULL AND "status" NOT IN ('cancelled', 'no_show'));
