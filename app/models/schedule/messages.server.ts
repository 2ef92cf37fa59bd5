import { count, desc, eq } from "drizzle-orm";
import { appointmentMessages, appointments, patients, recallMessages } from "~/db/schema";
import { formatLocal } from "~/lib/scheduling/time";
import { db } from "~/utils/db.server";

export type MessageStatus = "queued" | "sent" | "skipped" | "failed";

/**
 * What the practice has e-mailed patients, newest first: a page of appointment messages and a page
 * of recalls (both of one status when `filter` is given), with their totals and times in `timeZone`.
 */
export async function sentMessagesPage({
  filter,
  apptPage,
  recallPage,
  pageSize,
  timeZone,
}: {
  filter: MessageStatus | null;
  apptPage: number;
  recallPage: number;
  pageSize: number;
  timeZone: string;
}) {
  const apptWhere = filter ? eq(appointmentMessages.status, filter) : undefined;
  const recallWhere = filter ? eq(recallMessages.status, filter) : undefined;
  const [[apptCount], [recallCount]] = await Promise.all([
    db.select({ n: count() }).from(appointmentMessages).where(apptWhere),
    db.select({ n: count() }).from(recallMessages).where(recallWhere),
  ]);
  const appt = await db
    .select({
      id: appointmentMessages.id,
      kind: appointmentMessages.kind,
      status: appointmentMessages.status,
      recipient: appointmentMessages.recipient,
      email: patients.email,
      dueAt: appointmentMessages.dueAt,
      sentAt: appointmentMessages.sentAt,
      attempts: appointmentMessages.attempts,
      error: appointmentMessages.lastError,
      reason: appointmentMessages.skippedReason,
      first: patients.firstName,
      last: patients.lastName,
      appointmentId: appointments.id,
      start: appointments.startsAt,
    })
    .from(appointmentMessages)
    .innerJoin(appointments, eq(appointments.id, appointmentMessages.appointmentId))
    .innerJoin(patients, eq(patients.id, appointments.patientId))
    .where(apptWhere)
    .orderBy(desc(appointmentMessages.createdAt), desc(appointmentMessages.id))
    .limit(pageSize)
    .offset((apptPage - 1) * pageSize);
  const recalls = await db
    .select({
      id: recallMessages.id,
      status: recallMessages.status,
      recipient: recallMessages.recipient,
      email: patients.email,
      dueDate: recallMessages.dueDate,
      sentAt: recallMessages.sentAt,
      createdAt: recallMessages.createdAt,
      error: recallMessages.lastError,
      reason: recallMessages.skippedReason,
      first: patients.firstName,
      last: patients.lastName,
    })
    .from(recallMessages)
    .innerJoin(patients, eq(patients.id, recallMessages.patientId))
    .where(recallWhere)
    .orderBy(desc(recallMessages.createdAt), desc(recallMessages.id))
    .limit(pageSize)
    .offset((recallPage - 1) * pageSize);
  return {
    filter,
    apptPaging: { page: apptPage, pageSize, total: apptCount?.n ?? 0 },
    recallPaging: { page: recallPage, pageSize, total: recallCount?.n ?? 0 },
    appointmentMessages: appt.map((m) => ({
      id: m.id,
      kind: m.kind,
      status: m.status,
      to: m.recipient ?? m.email ?? "no address",
      patient: `${m.first} ${m.last}`,
      appointment: formatLocal(m.start, timeZone),
      appointmentId: m.appointmentId,
      when: m.sentAt ? formatLocal(m.sentAt, timeZone) : formatLocal(m.dueAt, timeZone),
      attempts: m.attempts,
      note: m.reason ?? m.error ?? "",
    })),
    recalls: recalls.map((r) => ({
      id: r.id,
      status: r.status,
      to: r.recipient ?? r.email ?? "no address",
      patient: `${r.first} ${r.last}`,
      dueDate: r.dueDate,
      when: formatLocal(r.sentAt ?? r.createdAt, timeZone),
      note: r.reason ?? r.error ?? "",
    })),
  };
}
