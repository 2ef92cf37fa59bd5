CREATE TYPE "public"."acuity_notation" AS ENUM('metric', 'feet', 'decimal', 'logmar');--> statement-breakpoint
ALTER TABLE "practice_settings" ADD COLUMN "acuity_notation" "acuity_notation" DEFAULT 'metric' NOT NULL;--> statement-breakpoint
ALTER TABLE "referrals" ADD COLUMN "proposed_urgency" "referral_urgency";--> statement-breakpoint
ALTER TABLE "referrals" ADD COLUMN "urgency_override_reason" text;