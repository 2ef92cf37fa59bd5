import { sql } from "drizzle-orm";
import { check, index, integer, pgEnum, pgTable, text, timestamp, uuid } from "drizzle-orm/pg-core";
import { users } from "./auth";
import { exams } from "./exams";
import { patients } from "./patients";

export const documentKindEnum = pgEnum("document_kind", ["fundus_photo", "field_printout", "outside_record", "other"]);

/** An uploaded image or PDF, attached to a patient and optionally to one of their exams. Bytes live behind the storage interface. */
export const documents = pgTable(
  "documents",
  {
    id: uuid().primaryKey().defaultRandom(),
    patientId: uuid()
      .notNull()
      .references(() => patients.id, { onDelete: "restrict" }),
    examId: uuid().references(() => exams.id, { onDelete: "set null" }),
    kind: documentKindEnum().notNull(),
    description: text().notNull().default(""),
    originalName: text().notNull(),
    /** Detected from the bytes, never taken from the browser. */
    contentType: text().notNull(),
    sizeBytes: integer().notNull(),
    storageKey: text().notNull(),
    thumbnailKey: text(),
    uploadedById: uuid()
      .notNull()
      .references(() => users.id, { onDelete: "restrict" }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    /** A clinician read the result (a field printout, a scan report…): when and who. */
    reviewedAt: timestamp({ withTimezone: true }),
    reviewedById: uuid().references(() => users.id, { onDelete: "restrict" }),
  },
  (t) => [
    index("documents_patient_idx").on(t.patientId, t.createdAt),
    index("documents_exam_idx").on(t.examId),
    // The home page's results to review: unreviewed documents, newest first.
    index("documents_unreviewed_idx")
      .on(t.createdAt)
      .where(sql`${t.reviewedAt} is null`),
    check("documents_reviewed", sql`(${t.reviewedAt} is null) = (${t.reviewedById} is null)`),
    check("documents_type", sql`${t.contentType} in ('image/jpeg', 'image/png', 'image/webp', 'application/pdf')`),
  ],
);
