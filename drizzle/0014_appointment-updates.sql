ALTER TYPE "public"."appointment_message_kind" ADD VALUE 'update';--> statement-breakpoint
DROP INDEX "appointment_messages_appt_kind_uq";--> statement-breakpoint
ALTER TABLE "appointment_messages" ADD COLUMN "sequence" integer DEFAULT 0 NOT NULL;--> statement-breakpoint
CREATE UNIQUE INDEX "appointment_messages_appt_kind_seq_uq" ON "appointment_messages" USING btree ("appointment_id","kind","sequence");