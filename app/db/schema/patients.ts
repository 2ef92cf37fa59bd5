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
    remindersByEmail: boolean().notNull().default(true),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [index("patients_name_dob_idx").on(t.lastName, t.firstName, t.dateOfBirth)],
);
