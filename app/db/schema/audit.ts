import { bigint, index, jsonb, pgTable, text, timestamp, uuid } from "drizzle-orm/pg-core";
import { users } from "./auth";
import { patients } from "./patients";

/** Append-only record of who did what: sign-ins, role changes, every read and write of clinical data. */
export const auditLog = pgTable(
  "audit_log",
  {
    id: bigint({ mode: "number" }).primaryKey().generatedAlwaysAsIdentity(),
    at: timestamp({ withTimezone: true }).notNull().defaultNow(),
    actorUserId: uuid().references(() => users.id, { onDelete: "set null" }),
    /** e.g. "auth.sign_in", "auth.sign_in_failed", "user.role_changed", "chart.read" */
    action: text().notNull(),
    entityType: text(),
    entityId: text(),
    patientId: uuid().references(() => patients.id, { onDelete: "set null" }),
    ip: text(),
    detail: jsonb().$type<Record<string, unknown>>(),
  },
  (t) => [
    index("audit_log_at_idx").on(t.at),
    index("audit_log_patient_idx").on(t.patientId, t.at),
    index("audit_log_action_idx").on(t.action, t.at),
  ],
);
