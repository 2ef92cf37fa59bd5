import { desc, eq } from "drizzle-orm";
import { Form } from "react-router";
import type { Route } from "./+types/messages";
import { ScheduleNav } from "./schedule-nav";
import { usePolling } from "./day-ui";
import { PageHeader } from "~/components/page-header";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Select } from "~/components/ui/input";
import { StatusBadge } from "~/components/ui/notice";
import { appointmentMessages, appointments, patients, recallMessages } from "~/db/schema";
import { formatLocal } from "~/lib/scheduling/time";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { db } from "~/utils/db.server";
import { practiceSchedule } from "~/models/schedule/schedule.server";

const STATUSES = ["queued", "sent", "skipped", "failed"] as const;
type MsgStatus = (typeof STATUSES)[number];

/** What the practice has e-mailed patients (appointment messages and recalls), newest first. */
export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, STAFF_ROLES);
  const { timeZone } = await practiceSchedule();
  const status = new URL(request.url).searchParams.get("status");
  const filter = (STATUSES as readonly string[]).includes(status ?? "") ? (status as MsgStatus) : null;
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
    .where(filter ? eq(appointmentMessages.status, filter) : undefined)
    .orderBy(desc(appointmentMessages.createdAt))
    .limit(200);
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
    .where(filter ? eq(recallMessages.status, filter) : undefined)
    .orderBy(desc(recallMessages.createdAt))
    .limit(200);
  return {
    filter,
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

const LABEL: Record<MsgStatus, string> = { queued: "Waiting", sent: "Sent", skipped: "Not sent", failed: "Failed" };
const TONE: Record<MsgStatus, "info" | "success" | "warning" | "error"> = {
  queued: "info",
  sent: "success",
  skipped: "warning",
  failed: "error",
};
const KIND = {
  confirmation: "Confirmation",
  reminder: "Reminder",
  update: "Calendar update (moved)",
  cancellation: "Cancellation",
} as const;

export default function Messages({ loaderData }: Route.ComponentProps) {
  const { appointmentMessages: appt, recalls, filter } = loaderData;
  usePolling(10);
  return (
    <>
      <PageHeader
        title="E-mail log"
        description="Confirmations, reminders, calendar updates after moves, cancellation notices and recalls: what went out, what waits, and why any was not sent."
      />
      <ScheduleNav />
      <Form method="get" className="mb-4 flex items-end gap-3">
        <div>
          <label htmlFor="msg-status" className="mb-1 block text-sm font-semibold">
            Show
          </label>
          <Select id="msg-status" name="status" defaultValue={filter ?? ""} className="w-48">
            <option value="">All</option>
            {STATUSES.map((s) => (
              <option key={s} value={s}>
                {LABEL[s]}
              </option>
            ))}
          </Select>
        </div>
        <Button type="submit" variant="secondary">
          Filter
        </Button>
      </Form>
      <Card title="Appointment e-mails" className="mb-6">
        <div className="overflow-x-auto">
          <table className="w-full text-left text-sm">
            <thead className="border-b border-line text-muted">
              <tr>
                <th className="py-2 pr-4 font-semibold">E-mail</th>
                <th className="py-2 pr-4 font-semibold">Patient</th>
                <th className="py-2 pr-4 font-semibold">Appointment</th>
                <th className="py-2 pr-4 font-semibold">Status</th>
                <th className="py-2 pr-4 font-semibold">Sent or due</th>
                <th className="py-2 font-semibold">Note</th>
              </tr>
            </thead>
            <tbody className="divide-y divide-line">
              {appt.map((m) => (
                <tr key={m.id}>
                  <td className="py-2 pr-4 font-semibold">{KIND[m.kind]}</td>
                  <td className="py-2 pr-4">
                    {m.patient}
                    <span className="block text-muted">{m.to}</span>
                  </td>
                  <td className="py-2 pr-4">
                    <a
                      href={`/schedule/appointments/${m.appointmentId}`}
                      className="text-accent-700 underline underline-offset-4"
                    >
                      {m.appointment}
                    </a>
                  </td>
                  <td className="py-2 pr-4">
                    <StatusBadge tone={TONE[m.status]}>{LABEL[m.status]}</StatusBadge>
                  </td>
                  <td className="py-2 pr-4">{m.when}</td>
                  <td className="py-2">
                    {m.note}
                    {m.attempts > 1 ? ` (${m.attempts} attempts)` : ""}
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
          {appt.length === 0 ? <p className="py-3 text-muted">Nothing yet.</p> : null}
        </div>
      </Card>
      <Card title="Recall e-mails">
        <div className="overflow-x-auto">
          <table className="w-full text-left text-sm">
            <thead className="border-b border-line text-muted">
              <tr>
                <th className="py-2 pr-4 font-semibold">Patient</th>
                <th className="py-2 pr-4 font-semibold">Due</th>
                <th className="py-2 pr-4 font-semibold">Status</th>
                <th className="py-2 pr-4 font-semibold">When</th>
                <th className="py-2 font-semibold">Note</th>
              </tr>
            </thead>
            <tbody className="divide-y divide-line">
              {recalls.map((r) => (
                <tr key={r.id}>
                  <td className="py-2 pr-4">
                    {r.patient}
                    <span className="block text-muted">{r.to}</span>
                  </td>
                  <td className="py-2 pr-4">{r.dueDate}</td>
                  <td className="py-2 pr-4">
                    <StatusBadge tone={TONE[r.status]}>{LABEL[r.status]}</StatusBadge>
                  </td>
                  <td className="py-2 pr-4">{r.when}</td>
                  <td className="py-2">{r.note}</td>
                </tr>
              ))}
            </tbody>
          </table>
          {recalls.length === 0 ? <p className="py-3 text-muted">No recalls sent yet.</p> : null}
        </div>
      </Card>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "E-mail log · Dioptra" }];
