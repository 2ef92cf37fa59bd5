import { dateTimeFormat } from "~/lib/format/intl";
import { createColumnHelper } from "@tanstack/react-table";
import { data, Form, Link } from "react-router";
import type { Route } from "./+types/day";
import { AppointmentStatus } from "~/components/schedule/status-ui";
import { ScheduleNav } from "./schedule-nav";
import { StatusCommands, usePolling } from "./day-ui";
import { loadDayList, statusAction } from "~/models/schedule/day.server";
import { MoveRequests } from "./move-requests";
import { openMoveRequests, settleMoveRequest } from "~/models/schedule/move-requests.server";
import { DataTable } from "~/components/data-table";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { PageHeader } from "~/components/page-header";
import { Button, buttonClass } from "~/components/ui/button";
import { Input, Select } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";
import { addDays } from "~/lib/scheduling/time";

export async function loader({ request }: Route.LoaderArgs) {
  const { setCookie, ...day } = await loadDayList(request);
  return data(
    { ...day, moveRequests: await openMoveRequests(day.timeZone) },
    setCookie ? { headers: { "set-cookie": setCookie } } : undefined,
  );
}

export async function action({ request }: Route.ActionArgs) {
  const form = await request.clone().formData();
  if (form.get("intent") === "settle-move-request") return settleMoveRequest(request, form);
  return statusAction(request);
}

type Row = Route.ComponentProps["loaderData"]["appointments"][number];
const col = createColumnHelper<Row>();

/** The day list's columns; the commands depend on who is looking and which day it is. */
function dayColumns(role: Route.ComponentProps["loaderData"]["user"]["role"], date: string, today: string) {
  return [
    col.accessor("time", {
      header: "Time",
      meta: { className: "font-semibold whitespace-nowrap" },
      cell: ({ row: { original: a } }) => (
        <Link to={`/schedule/appointments/${a.id}`} className="text-accent-700 underline underline-offset-4">
          {a.time}
        </Link>
      ),
    }),
    col.accessor("patientName", { header: "Patient" }),
    col.accessor("typeName", {
      header: "Visit",
      cell: ({ row: { original: a } }) => (
        <>
          {a.typeName}
          <span className="block text-muted">{a.providerName}</span>
          {a.place ? <span className="block text-muted">{a.place}</span> : null}
        </>
      ),
    }),
    col.accessor("status", {
      header: "Status",
      cell: ({ row: { original: a } }) => <AppointmentStatus status={a.status} />,
    }),
    col.display({
      id: "commands",
      header: () => <span className="sr-only">Commands</span>,
      cell: ({ row: { original: a } }) => (
        <StatusCommands id={a.id} status={a.status} role={role} name={a.patientName} date={date} today={today} />
      ),
    }),
  ];
}

export default function DayList({ loaderData }: Route.ComponentProps) {
  const { appointments, date, today, provider, providers, site, sites, timeZone, user, checkedAt, moveRequests } =
    loaderData;
  usePolling(5);
  const dayTitle = dateTimeFormat("en-GB", { dateStyle: "full", timeZone: "UTC" }).format(
    new Date(`${date}T12:00:00Z`),
  );
  const live = appointments.filter((a) => a.status !== "cancelled");
  const cancelled = appointments.filter((a) => a.status === "cancelled");
  return (
    <>
      <PageHeader
        title="Day list"
        description={`${dayTitle}${date === today ? " (today)" : ""} · times in ${timeZone}`}
      />
      <ScheduleNav />
      <MoveRequests requests={moveRequests} />
      <Form method="get" className="mb-4 flex flex-wrap items-end gap-3">
        <div>
          <label htmlFor="day-provider" className="mb-1 block text-sm font-semibold">
            Whose list
          </label>
          <Select id="day-provider" name="provider" defaultValue={provider} className="w-64">
            <option value="all">Whole practice (front desk)</option>
            {providers.map((p) => (
              <option key={p.id} value={p.id}>
                {p.name}
              </option>
            ))}
          </Select>
        </div>
        {sites.length > 1 ? (
          <div>
            <label htmlFor="day-site" className="mb-1 block text-sm font-semibold">
              Site
            </label>
            <Select id="day-site" name="site" defaultValue={site} className="w-56">
              <option value="all">Every site</option>
              {sites.map((s) => (
                <option key={s.id} value={s.id}>
                  {s.name}
                </option>
              ))}
            </Select>
          </div>
        ) : null}
        <div>
          <label htmlFor="day-date" className="mb-1 block text-sm font-semibold">
            Day
          </label>
          <Input id="day-date" type="date" name="date" defaultValue={date} className="w-44" />
        </div>
        <Button type="submit" variant="secondary">
          Show
        </Button>
        <Link className={buttonClass("ghost")} to={`?provider=${provider}&site=${site}&date=${addDays(date, -1)}`}>
          ‹ Previous day
        </Link>
        <Link className={buttonClass("ghost")} to={`?provider=${provider}&site=${site}&date=${addDays(date, 1)}`}>
          Next day ›
        </Link>
      </Form>
      <p className="mb-3 text-sm text-muted" aria-live="off">
        Updates by itself every few seconds · last checked {checkedAt}
      </p>
      {live.length === 0 ? (
        <Notice tone="info" title="No appointments on this day." />
      ) : (
        <DataTable
          data={live}
          columns={dayColumns(user.role, date, today)}
          getRowId={(a) => a.id}
          rowAttributes={(a) => ({ "data-appointment-id": a.id })}
          caption="Appointments of the day"
          empty="No appointments on this day."
          className="rounded-lg border border-line bg-white px-4 shadow-sm"
        />
      )}
      {cancelled.length ? (
        <details className="mt-6">
          <summary className="cursor-pointer text-sm font-semibold">Cancelled on this day ({cancelled.length})</summary>
          <ul className="mt-2 space-y-1 text-sm">
            {cancelled.map((a) => (
              <li key={a.id}>
                {a.time} · {a.patientName} · {a.typeName} · {a.providerName} · <AppointmentStatus status={a.status} />
              </li>
            ))}
          </ul>
        </details>
      ) : null}
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Day list · Dioptra" }];

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
