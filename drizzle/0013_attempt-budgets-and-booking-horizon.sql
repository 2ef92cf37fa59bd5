CREATE TABLE "attempt_budgets" (
	"scope" text NOT NULL,
	"account" text DEFAULT '' NOT NULL,
	"address" text DEFAULT '' NOT NULL,
	"tokens" double precision NOT NULL,
	"granted" boolean NOT NULL,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "attempt_budgets_scope_account_address_pk" PRIMARY KEY("scope","account","address")
);
--> statement-breakpoint
ALTER TABLE "practice_settings" ADD COLUMN "portal_booking_days" integer DEFAULT 90 NOT NULL;--> statement-breakpoint
ALTER TABLE "practice_settings" ADD COLUMN "staff_booking_days" integer DEFAULT 730 NOT NULL;--> statement-breakpoint
CREATE INDEX "attempt_budgets_account_idx" ON "attempt_budgets" USING btree ("account");--> statement-breakpoint
ALTER TABLE "practice_settings" ADD CONSTRAINT "practice_settings_booking_days" CHECK ("practice_settings"."portal_booking_days" between 1 and 3660 and "practice_settings"."staff_booking_days" between 1 and 3660);