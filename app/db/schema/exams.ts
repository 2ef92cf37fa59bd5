import { index, pgEnum, pgTable, timestamp, uuid } from "drizzle-orm/pg-core";
import { users } from "./auth";
import { patients } from "./patients";
import { appointments } from "./schedule";

export const examStatusEnum = pgEnum("exam_status", ["in_progress", "signed"]);

/** One eye examination (one visit). Its sections live in their own tables keyed by exam. */
export const exams = pgTable(
  "exams",
  {
    id: uuid().primaryKey().defaultRandom(),
    patientId: uuid()
      .notNull()
      .references(() => patients.id, { onDelete: "restrict" }),
    optometristId: uuid()
      .notNull()
      .references(() => users.id, { onDelete: "restrict" }),
    appointmentId: uuid().references(() => appointments.id, { onDelete: "set null" }),
    /** When the exam took place (the visit), shown in the practice's time zone. */
    examinedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    status: examStatusEnum().notNull().default("in_progress"),
    signedAt: timestamp({ withTimezone: true }),
    signedById: uuid().references(() => users.id, { onDelete: "restrict" }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [index("exams_patient_examined_idx").on(t.patientId, t.examinedAt), index("exams_appointment_idx").on(t.appointmentId)],
);
