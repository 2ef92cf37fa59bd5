import { createColumnHelper } from "@tanstack/react-table";
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
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { practiceSchedule } from "~/models/schedule/schedule.server";
import { sentMessagesPage } from "~/models/schedule/messages.server";

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
  return sentMessagesPage({ filter, apptPage, recallPage, pageSize: PAGE_SIZE, timeZone });
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
