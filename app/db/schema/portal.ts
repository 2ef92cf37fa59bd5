import { index, pgEnum, pgTable, text, timestamp, uuid } from "drizzle-orm/pg-core";
import { users } from "./auth";
import { patients } from "./patients";
import { appointments } from "./schedule";

export const changeRequestStatusEnum = pgEnum("change_request_status", ["open", "done"]);

/** A patient's request, from the portal, to move a booked visit; the front desk sees and settles it. */
export const appointmentChangeRequests = pgTable(
  "appointment_change_requests",
  {
    id: uuid().primaryKey().defaultRandom(),
    appointmentId: uuid()
      .notNull()
      .references(() => appointments.id, { onDelete: "cascade" }),
    patientId: uuid()
      .notNull()
      .references(() => patients.id, { onDelete: "cascade" }),
    /** The patient's words: when would suit them instead. */
    message: text().notNull(),
    status: changeRequestStatusEnum().notNull().default("open"),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    handledById: uuid().references(() => users.id, { onDelete: "set null" }),
    handledAt: timestamp({ withTimezone: true }),
  },
  (t) => [
    index("appointment_change_requests_open_idx").on(t.status, t.createdAt),
    index("appointment_change_requests_appointment_idx").on(t.appointmentId),
  ],
);
