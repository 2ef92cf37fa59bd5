import { createColumnHelper } from "@tanstack/react-table";
import { count, desc, eq } from "drizzle-orm";
import { Form } from "react-router";
import type { Route } from "./+types/messages";
import { ScheduleNav } from "./schedule-nav";
import { usePolling } from "./day-ui";
import { DataTable } from "~/components/data-table";
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
const PAGE_SIZE = 25;
const pageOf = (raw: string | null) => Math.min(100_000, Math.max(1, Math.trunc(Number(raw)) || 1));
type MsgStatus = (typeof STATUSES)[number];

/** What the practice has e-mailed patients (appointment messages and recalls), newest first. */
export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, STAFF_ROLES);
  const { timeZone } = await practiceSchedule();
  const params = new URL(request.url).searchParams;
  const status = params.get("status");
  const apptPage = pageOf(params.get("apage"));
  const recallPage = pageOf(params.get("rpage"));
  const filter = (STATUSES as readonly string[]).includes(status ?? "") ? (status as MsgStatus) : null;
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
    .limit(PAGE_SIZE)
    .offset((apptPage - 1) * PAGE_SIZE);
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
    .limit(PAGE_SIZE)
    .offset((recallPage - 1) * PAGE_SIZE);
  return {
    filter,
    apptPaging: { page: apptPage, pageSize: PAGE_SIZE, total: apptCount?.n ?? 0 },
    recallPaging: { page: recallPage, pageSize: PAGE_SIZE, total: recallCount?.n ?? 0 },
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

type LoaderData = Route.ComponentProps["loaderData"];
const apptCol = createColumnHelper<LoaderData["appointmentMessages"][number]>();
const apptColumns = [
  apptCol.accessor("kind", { header: "E-mail", cell: (c) => KIND[c.getValue()], meta: { className: "font-semibold" } }),
  apptCol.accessor("patient", {
    header: "Patient",
    cell: ({ row: { original: m } }) => (
      <>
        {m.patient}
        <span className="block text-muted">{m.to}</span>
      </>
    ),
  }),
  apptCol.accessor("appointment", {
    header: "Appointment",
    cell: ({ row: { original: m } }) => (
      <a href={`/schedule/appointments/${m.appointmentId}`} className="text-accent-700 underline underline-offset-4">
        {m.appointment}
      </a>
    ),
  }),
  apptCol.accessor("status", {
    header: "Status",
    cell: (c) => <StatusBadge tone={TONE[c.getValue()]}>{LABEL[c.getValue()]}</StatusBadge>,
  }),
  apptCol.accessor("when", { header: "Sent or due" }),
  apptCol.accessor("note", {
    header: "Note",
    cell: ({ row: { original: m } }) => `${m.note}${m.attempts > 1 ? ` (${m.attempts} attempts)` : ""}`,
  }),
];

const recallCol = createColumnHelper<LoaderData["recalls"][number]>();
const recallColumns = [
  recallCol.accessor("patient", {
    header: "Patient",
    cell: ({ row: { original: r } }) => (
      <>
        {r.patient}
        <span className="block text-muted">{r.to}</span>
      </>
    ),
  }),
  recallCol.accessor("dueDate", { header: "Due" }),
  recallCol.accessor("status", {
    header: "Status",
    cell: (c) => <StatusBadge tone={TONE[c.getValue()]}>{LABEL[c.getValue()]}</StatusBadge>,
  }),
  recallCol.accessor("when", { header: "When" }),
  recallCol.accessor("note", { header: "Note" }),
];

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
        <DataTable
          data={appt}
          columns={apptColumns}
          getRowId={(m) => m.id}
          caption="Appointment e-mails, newest first"
          empty="Nothing yet."
          paging={{ ...loaderData.apptPaging, noun: ["e-mail", "e-mails"] }}
          params={{ page: "apage" }}
        />
      </Card>
      <Card title="Recall e-mails">
        <DataTable
          data={recalls}
          columns={recallColumns}
          getRowId={(r) => r.id}
          caption="Recall e-mails, newest first"
          empty="No recalls sent yet."
          paging={{ ...loaderData.recallPaging, noun: ["e-mail", "e-mails"] }}
          params={{ page: "rpage" }}
        />
      </Card>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "E-mail log · Dioptra" }];
