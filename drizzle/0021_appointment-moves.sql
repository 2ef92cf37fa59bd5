CREATE TABLE "appointment_moves" (
	"id" bigint PRIMARY KEY GENERATED ALWAYS AS IDENTITY (sequence name "appointment_moves_id_seq" INCREMENT BY 1 MINVALUE 1 MAXVALUE 9223372036854775807 START WITH 1 CACHE 1),
	"appointment_id" uuid NOT NULL,
	"from_starts_at" timestamp with time zone NOT NULL,
	"from_ends_at" timestamp with time zone NOT NULL,
	"from_provider_id" uuid,
	"to_starts_at" timestamp with time zone NOT NULL,
	"to_ends_at" timestamp with time zone NOT NULL,
	"to_provider_id" uuid,
	"moved_by_id" uuid,
	"moved_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
ALTER TABLE "appointment_moves" ADD CONSTRAINT "appointment_moves_appointment_id_appointments_id_fk" FOREIGN KEY ("appointment_id") REFERENCES "public"."appointments"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "appointment_moves" ADD CONSTRAINT "appointment_moves_from_provider_id_users_id_fk" FOREIGN KEY ("from_provider_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "appointment_moves" ADD CONSTRAINT "appointment_moves_to_provider_id_users_id_fk" FOREIGN KEY ("to_provider_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "appointment_moves" ADD CONSTRAINT "appointment_moves_moved_by_id_users_id_fk" FOREIGN KEY ("moved_by_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "appointment_moves_appt_idx" ON "appointment_moves" USING btree ("appointment_id","moved_at");