import { sql } from "drizzle-orm";
import { boolean, check, index, integer, pgEnum, pgTable, text, timestamp, uuid } from "drizzle-orm/pg-core";
import { users } from "./auth";
import { feeItems } from "./billing";
import { patients } from "./patients";

/** Kinds of visit the practice offers; the owner keeps them. */
export const appointmentTypes = pgTable(
  "appointment_types",
  {
    id: uuid().primaryKey().defaultRandom(),
    name: text().notNull(),
    durationMinutes: integer().notNull(),
    defaultFeeItemId: uuid().references(() => feeItems.id, { onDelete: "set null" }),
    /** Months until the patient is due again after this kind of visit (null: no recall). */
    recallMonths: integer(),
    active: boolean().notNull().default(true),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [check("appointment_types_duration", sql`${t.durationMinutes} between 5 and 480`)],
);

export const appointmentStatusEnum = pgEnum("appointment_status", ["booked", "confirmed", "arrived", "in_exam", "completed", "cancelled", "no_show"]);

/**
 * One booked visit. No double booking of a provider is enforced by an exclusion constraint over
 * the provider's time range for live (not cancelled / no-show) appointments: see the migration.
 */
export const appointments = pgTable(
  "appointments",
  {
    id: uuid().primaryKey().defaultRandom(),
    patientId: uuid()
      .notNull()
      .references(() => patients.id, { onDelete: "restrict" }),
    providerId: uuid()
      .notNull()
      .references(() => users.id, { onDelete: "restrict" }),
    appointmentTypeId: uuid()
      .notNull()
      .references(() => appointmentTypes.id, { onDelete: "restrict" }),
    startsAt: timestamp({ withTimezone: true }).notNull(),
    endsAt: timestamp({ withTimezone: true }).notNull(),
    status: appointmentStatusEnum().notNull().default("booked"),
    notes: text().notNull().default(""),
    createdById: uuid().references(() => users.id, { onDelete: "set null" }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    check("appointments_end_after_start", sql`${t.endsAt} > ${t.startsAt}`),
    index("appointments_provider_start_idx").on(t.providerId, t.startsAt),
    index("appointments_start_idx").on(t.startsAt),
    index("appointments_patient_idx").on(t.patientId, t.startsAt),
  ],
);
