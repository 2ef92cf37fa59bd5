CREATE TABLE "exam_section_states" (
	"exam_id" uuid NOT NULL,
	"section" text NOT NULL,
	"saved_at" timestamp with time zone,
	"failed_at" timestamp with time zone,
	"failure_message" text,
	"refused_values" jsonb,
	"refused_errors" jsonb,
	CONSTRAINT "exam_section_states_exam_id_section_pk" PRIMARY KEY("exam_id","section")
);
--> statement-breakpoint
ALTER TABLE "exam_refractions" ADD COLUMN "addendum_id" uuid;--> statement-breakpoint
ALTER TABLE "exam_section_states" ADD CONSTRAINT "exam_section_states_exam_id_exams_id_fk" FOREIGN KEY ("exam_id") REFERENCES "public"."exams"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "exam_refractions" ADD CONSTRAINT "exam_refractions_addendum_id_exam_addenda_id_fk" FOREIGN KEY ("addendum_id") REFERENCES "public"."exam_addenda"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
-- Sections saved before their state was kept: the time of their last recorded save, from the audit trail.
INSERT INTO "exam_section_states" ("exam_id", "section", "saved_at")
SELECT e."id", a."detail"->>'section', max(a."at")
FROM "audit_log" a JOIN "exams" e ON e."id"::text = a."entity_id"
WHERE a."action" = 'exam.section_saved' AND a."detail"->>'section' IS NOT NULL
GROUP BY e."id", a."detail"->>'section'
ON CONFLICT DO NOTHING;
