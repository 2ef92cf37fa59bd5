CREATE TYPE "public"."jurisdiction" AS ENUM('uk', 'us');--> statement-breakpoint
ALTER TABLE "practice_settings" ADD COLUMN "jurisdiction" "jurisdiction" DEFAULT 'uk' NOT NULL;