import { relations } from "drizzle-orm";
import { auditLog } from "./audit";
import { sessions, userTokens, users } from "./auth";
import { patients } from "./patients";

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
