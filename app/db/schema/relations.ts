import { relations } from "drizzle-orm";
import { auditLog } from "./audit";
import { sessions, userTokens, users } from "./auth";
import { exams } from "./exams";
import { patients } from "./patients";
import { appointments, appointmentTypes } from "./schedule";

export const usersRelations = relations(users, ({ one, many }) => ({
  patient: one(patients, { fields: [users.patientId], references: [patients.id] }),
  sessions: many(sessions),
  tokens: many(userTokens),
}));

export const sessionsRelations = relations(sessions, ({ one }) => ({
  user: one(users, { fields: [sessions.userId], references: [users.id] }),
}));

export const userTokensRelations = relations(userTokens, ({ one }) => ({
  user: one(users, { fields: [userTokens.userId], references: [users.id] }),
}));

export const auditLogRelations = relations(auditLog, ({ one }) => ({
  actor: one(users, { fields: [auditLog.actorUserId], references: [users.id] }),
  patient: one(patients, { fields: [auditLog.patientId], references: [patients.id] }),
}));

export const appointmentsRelations = relations(appointments, ({ one }) => ({
  patient: one(patients, { fields: [appointments.patientId], references: [patients.id] }),
  provider: one(users, { fields: [appointments.providerId], references: [users.id] }),
  type: one(appointmentTypes, { fields: [appointments.appointmentTypeId], references: [appointmentTypes.id] }),
}));

export const examsRelations = relations(exams, ({ one }) => ({
  patient: one(patients, { fields: [exams.patientId], references: [patients.id] }),
  optometrist: one(users, { fields: [exams.optometristId], references: [users.id] }),
  appointment: one(appointments, { fields: [exams.appointmentId], references: [appointments.id] }),
}));
