import { useEffect } from "react";
import { data, Form, Link, redirect, useFetcher, useRevalidator } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/day";
import { AppointmentStatus } from "./status-ui";
import { ScheduleNav } from "./schedule-nav";
import { scheduleReferenceData } from "./schedule-data.server";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { PageHeader } from "~/components/page-header";
import { Button, buttonClass } from "~/components/ui/button";
import { Input, Select } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";
import { APPOINTMENT_STATUSES, NEXT_STATUSES, STATUS_COMMAND, type Status } from "~/lib/scheduling/status";
import { addDays, formatLocal, localDayRange, localParts } from "~/lib/scheduling/time";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { appointmentsBetween, BookingError, changeStatus, practiceSchedule } from "~/utils/schedule.server";

/** The day's appointments for the front desk (everyone) or one optometrist; `date` and `provider` in the query. */
export async function loadDayList(request: Request) {
  const user = await requireRole(request, STAFF_ROLES);
  const url = new URL(request.url);
  const { timeZone } = await practiceSchedule();
  const { providers } = await scheduleReferenceData();
  const today = localParts(new Date(), timeZone).date;
  const date = /^\d{4}-\d{2}-\d{2}$/.test(url.searchParams.get("date") ?? "") ? url.searchParams.get("date")! : today;
  const asked = url.searchParams.get("provider");
  const provider = asked === "all" || providers.some((p) => p.id === asked) ? asked! : user.role === "optometrist" ? user.id : "all";
  const { start, end } = localDayRange(date, timeZone);
  const rows = await appointmentsBetween(start, end, { providerId: provider === "all" ? undefined : provider, includeCancelled: true });
  return {
    user: { id: user.id, role: user.role },
    timeZone,
    date,
    today,
    provider,
    providers: providers.map(({ id, name }) => ({ id, name })),
    checkedAt: formatLocal(new Date(), timeZone, { withDate: false }),
    appointments: rows.map((r) => ({
      id: r.id,
      time: `${formatLocal(r.start, timeZone, { withDate: false })}–${formatLocal(r.end, timeZone, { withDate: false })}`,
      status: r.status,
      patientId: r.patientId,
      patientName: r.patientName,
      typeName: r.typeName,
      providerName: r.providerName,
      providerId: r.providerId,
    })),
  };
}

export async function loader({ request }: Route.LoaderArgs) {
  return loadDayList(request);
}

const statusSchema = z.object({ intent: z.literal("status"), appointmentId: z.uuid(), status: z.enum(APPOINTMENT_STATUSES) });

/** Shared by the day list and the appointment page: change a status, open the exam when it starts. */
export async function statusAction(request: Request) {
  const user = await requireRole(request, STAFF_ROLES);
  const parsed = statusSchema.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success) return data({ ok: false, error: "Choose an appointment and a status." }, { status: 400 });
  try {
    const { appointment, examId } = await changeStatus(user, parsed.data.appointmentId, parsed.data.status, request);
    if (examId) throw redirect(`/patients/${appointment.patientId}/exams/${examId}`);
    return { ok: true, error: null };
  } catch (error) {
    if (error instanceof BookingError) return data({ ok: false, error: error.message }, { status: error.status });
    throw error;
  }
}

export async function action({ request }: Route.ActionArgs) {
  return statusAction(request);
}

/** Commands of a row; "start exam" only for clinicians (the server checks it too). */
export function StatusCommands({ id, status, role, name }: { id: string; status: Status; role: string; name: string }) {
  const fetcher = useFetcher<{ ok: boolean; error: string | null }>();
  const next = NEXT_STATUSES[status].filter((s) => s !== "in_exam" || role !== "receptionist");
  const busy = fetcher.state !== "idle";
  return (
    <div>
      <fetcher.Form method="post" className="flex flex-wrap gap-2">
        <input type="hidden" name="intent" value="status" />
        <input type="hidden" name="appointmentId" value={id} />
        {next.map((s) => (
          <Button key={s} type="submit" name="status" value={s} variant={s === "cancelled" || s === "no_show" ? "danger" : s === "arrived" || s === "in_exam" ? "primary" : "secondary"} className="px-3 py-1" disabled={busy}>
            {STATUS_COMMAND[s]}
            <span className="sr-only"> for {name}</span>
          </Button>
        ))}
      </fetcher.Form>
      {fetcher.data?.error ? (
        <p role="alert" className="mt-1 text-sm font-semibold text-red-800">
          ✕ {fetcher.data.error}
        </p>
      ) : null}
    </div>
  );
}

/** Re-reads the page's data every `seconds` while the tab is visible: the list moves without a reload. */
export function usePolling(seconds: number) {
  const revalidator = useRevalidator();
  useEffect(() => {
    const t = setInterval(() => {
      if (document.visibilityState === "visible" && revalidator.state === "idle") revalidator.revalidate();
    }, seconds * 1000);
    return () => clearInterval(t);
  }, [revalidator, seconds]);
}

export default function DayList({ loaderData }: Route.ComponentProps) {
  const { appointments, date, today, provider, providers, timeZone, user, checkedAt } = loaderData;
  usePolling(5);
  const dayTitle = new Intl.DateTimeFormat("en-GB", { dateStyle: "full", timeZone: "UTC" }).format(new Date(`${date}T12:00:00Z`));
  const live = appointments.filter((a) => a.status !== "cancelled");
  const cancelled = appointments.filter((a) => a.status === "cancelled");
  return (
    <>
      <PageHeader title="Day list" description={`${dayTitle}${date === today ? " (today)" : ""} · practice time ${timeZone}`} />
      <ScheduleNav />
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
        <div>
          <label htmlFor="day-date" className="mb-1 block text-sm font-semibold">
            Day
          </label>
          <Input id="day-date" type="date" name="date" defaultValue={date} className="w-44" />
        </div>
        <Button type="submit" variant="secondary">
          Show
        </Button>
        <Link className={buttonClass("ghost")} to={`?provider=${provider}&date=${addDays(date, -1)}`}>
          ‹ Previous day
        </Link>
        <Link className={buttonClass("ghost")} to={`?provider=${provider}&date=${addDays(date, 1)}`}>
          Next day ›
        </Link>
      </Form>
      <p className="mb-3 text-sm text-muted" aria-live="off">
        Updates by itself every few seconds · last checked {checkedAt}
      </p>
      {live.length === 0 ? (
        <Notice tone="info" title="No appointments on this day." />
      ) : (
        <div className="overflow-x-auto rounded-lg border border-line bg-white shadow-sm">
          <table className="w-full text-left text-sm" aria-label="Appointments of the day">
            <thead className="border-b border-line text-muted">
              <tr>
                <th className="px-4 py-2 font-semibold">Time</th>
                <th className="px-4 py-2 font-semibold">Patient</th>
                <th className="px-4 py-2 font-semibold">Visit</th>
                <th className="px-4 py-2 font-semibold">Status</th>
                <th className="px-4 py-2 font-semibold">
                  <span className="sr-only">Commands</span>
                </th>
              </tr>
            </thead>
            <tbody className="divide-y divide-line">
              {live.map((a) => (
                <tr key={a.id} data-appointment-id={a.id}>
                  <td className="px-4 py-3 font-semibold whitespace-nowrap">
                    <Link to={`/schedule/appointments/${a.id}`} className="text-accent-700 underline underline-offset-4">
                      {a.time}
                    </Link>
                  </td>
                  <td className="px-4 py-3">{a.patientName}</td>
                  <td className="px-4 py-3">
                    {a.typeName}
                    <span className="block text-muted">{a.providerName}</span>
                  </td>
                  <td className="px-4 py-3">
                    <AppointmentStatus status={a.status} />
                  </td>
                  <td className="px-4 py-3">
                    <StatusCommands id={a.id} status={a.status} role={user.role} name={a.patientName} />
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
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
