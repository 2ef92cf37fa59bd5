import { sql, type SQL } from "drizzle-orm";
import { boolean, date, index, pgEnum, pgTable, text, timestamp, uuid } from "drizzle-orm/pg-core";

export const sexEnum = pgEnum("sex", ["female", "male", "other", "unknown"]);

export const patients = pgTable(
  "patients",
  {
    id: uuid().primaryKey().defaultRandom(),
    firstName: text().notNull(),
    lastName: text().notNull(),
    dateOfBirth: date({ mode: "string" }).notNull(),
    sex: sexEnum().notNull().default("unknown"),
    email: text(),
    phone: text(),
    addressLine1: text().notNull().default(""),
    city: text().notNull().default(""),
    postcode: text().notNull().default(""),
    /** Known allergies and current medications, shown on the chart summary. */
    allergies: text().notNull().default(""),
    medications: text().notNull().default(""),
    /** "No known allergies" was asked and recorded (empty allergies alone means not recorded). */
    noKnownAllergies: boolean().notNull().default(false),
    /** The patient's general practitioner, for referral letters. */
    gpName: text().notNull().default(""),
    gpPractice: text().notNull().default(""),
    gpAddress: text().notNull().default(""),
    gpPhone: text().notNull().default(""),
    /**
     * A child's parent or guardian, who answers for the patient and is contacted about them:
     * name, relationship, phone and e-mail (empty when none is recorded).
     */
    guardianName: text().notNull().default(""),
    guardianRelationship: text().notNull().default(""),
    guardianPhone: text().notNull().default(""),
    guardianEmail: text().notNull().default(""),
    remindersByEmail: boolean().notNull().default(true),
    /** Recall e-mails ("your yearly exam is due"), chosen apart from appointment reminders. */
    recallsByEmail: boolean().notNull().default(true),
    /**
     * Lower-cased name, e-mail and the phone's digits in one string, kept by the database, so
     * one trigram index answers "any part of the name, phone or e-mail" searches.
     */
    searchText: text()
      .notNull()
      .generatedAlwaysAs(
        (): SQL =>
          sql`lower(${patients.firstName} || ' ' || ${patients.lastName} || ' ' || coalesce(${patients.email}, '') || ' ' || regexp_replace(coalesce(${patients.phone}, ''), '[^0-9]', '', 'g'))`,
      ),
    /** When the latest exam took place; kept by the exam actions for the table's sort and the recall filter. */
    lastExamAt: timestamp({ withTimezone: true }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    // One index per sort of the patients table, each matching its ORDER BY exactly (read
    // backwards for the other direction), so a page is read in order and never sorted.
    index("patients_name_dob_id_idx").on(t.lastName, t.firstName, t.dateOfBirth, t.id),
    index("patients_search_trgm_idx").using("gin", sql`${t.searchText} gin_trgm_ops`),
    index("patients_dob_id_idx").on(t.dateOfBirth, t.id),
    // Latest exam first with never-examined patients last; backwards: never examined first, oldest next.
    index("patients_last_exam_desc_idx").on(t.lastExamAt.desc().nullsLast(), t.id.desc()),
    index("patients_created_idx").on(t.createdAt, t.id),
    // Search ranks surnames beginning with a typed word first, in name order: this index reads
    // them in that order (byte order, so a typed prefix is a range of it).
    index("patients_surname_prefix_idx").on(
      sql`lower(${t.lastName}) collate "C"`,
      sql`lower(${t.firstName}) collate "C"`,
      t.dateOfBirth,
      t.id,
    ),
  ],
);
