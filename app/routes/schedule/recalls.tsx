import { useEffect, useState } from "react";
import { data, Form, Link, useFetcher, useSearchParams } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/recalls";
import { formatDob } from "./booking-form";
import { RecallTable } from "./recall-table";
import { ScheduleNav } from "./schedule-nav";
import { PageHeader } from "~/components/page-header";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input, Select } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";
import { addDays, localParts } from "~/lib/scheduling/time";
import { practiceSchedule } from "~/models/schedule/schedule-settings.server";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { recallList, startRecallBatch } from "~/models/schedule/recalls.server";
import { activeSites } from "~/models/schedule/sites.server";

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, STAFF_ROLES);
  const url = new URL(request.url);
  const dueByParam = url.searchParams.get("dueBy");
  const dueFromParam = url.searchParams.get("dueFrom");
  const batchParam = url.searchParams.get("batch");
  const group = url.searchParams.get("group");
  const { timeZone } = await practiceSchedule();
  const today = localParts(new Date(), timeZone).date;
  const filters = {
    dueBy: dueByParam && /^\d{4}-\d{2}-\d{2}$/.test(dueByParam) ? dueByParam : addDays(today, 30),
    group: (group === "child" || group === "adult" ? group : "all") as "all" | "child" | "adult",
    includeBooked: url.searchParams.get("booked") === "1",
    includeRecalled: url.searchParams.get("recalled") === "1",
    dueFrom: dueFromParam && /^\d{4}-\d{2}-\d{2}$/.test(dueFromParam) ? dueFromParam : undefined,
    keepBatch: batchParam && z.uuid().safeParse(batchParam).success ? batchParam : undefined,
  };
  if (filters.dueFrom && filters.dueFrom > filters.dueBy) {
    return {
      rows: [],
      multiSite: false,
      today,
      dueBy: filters.dueBy,
      filters,
      thisMonth: monthOf(today),
      settings: { child: 0, adult: 0, under: 0 },
      filterError: "The first day comes after the last day: swap them, or clear the first day.",
    };
  }
  const list = await recallList(filters);
  const { rows, dueBy } = list;
  const multiSite = (await activeSites()).length > 1;
  return {
    rows,
    multiSite,
    today: list.today,
    dueBy,
    filters,
    thisMonth: monthOf(list.today),
    settings: {
      child: list.settings.recallMonthsChild,
      adult: list.settings.recallMonthsAdult,
      under: list.settings.childUnderYears,
    },
    filterError: null,
  };
}

/** The first and last day of the month of a YYYY-MM-DD day. */
function monthOf(day: string) {
  const [y, m] = day.split("-").map(Number) as [number, number];
  const last = new Date(Date.UTC(y, m, 0)).getUTCDate();
  const mm = String(m).padStart(2, "0");
  return { from: `${y}-${mm}-01`, to: `${y}-${mm}-${String(last).padStart(2, "0")}` };
}

const sendSchema = z.object({
  intent: z.literal("send"),
  patientId: z.array(z.uuid()).min(1, "Choose at least one patient.").max(2000),
});

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, STAFF_ROLES);
  const form = await request.formData();
  const parsed = sendSchema.safeParse({ intent: form.get("intent"), patientId: form.getAll("patientId") });
  if (!parsed.success)
    return data({ error: parsed.error.issues[0]?.message ?? "Choose patients.", batch: null }, { status: 400 });
  const batch = await startRecallBatch(user, parsed.data.patientId, request);
  return { error: null, batch };
}

type Progress = {
  total: number;
  sent: number;
  skipped: number;
  failed: number;
  queued: number;
  done: number;
  finished: boolean;
};

function BatchProgress({ batchId, total, onFinished }: { batchId: string; total: number; onFinished: () => void }) {
  const poll = useFetcher<Progress>();
  useEffect(() => {
    if (poll.data?.finished) {
      onFinished();
      return;
    }
    const t = setTimeout(() => poll.load(`/schedule/recalls/batches/${batchId}`), poll.data ? 700 : 100);
    return () => clearTimeout(t);
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, [poll.data, batchId]);
  const p = poll.data ?? { total, sent: 0, skipped: 0, failed: 0, queued: total, done: 0, finished: total === 0 };
  return (
    <div className="space-y-2" data-testid="recall-progress">
      <label htmlFor="recall-progress" className="block text-sm font-semibold">
        Sending recall e-mails: {p.done} of {p.total} done
      </label>
      <progress
        id="recall-progress"
        max={Math.max(p.total, 1)}
        value={p.done}
        className="h-3 w-full accent-accent-700"
      />
      <p className="text-sm" aria-live="polite">
        {p.sent} sent · {p.skipped} not sent (opted out, no address or already booked) · {p.failed} failed
        {p.finished ? " · finished" : ""}
      </p>
    </div>
  );
}

export default function Recalls({ loaderData }: Route.ComponentProps) {
  const { rows, dueBy, filters, settings, today, thisMonth, filterError } = loaderData;
  const send = useFetcher<typeof action>();
  const [params, setParams] = useSearchParams();
  // When a batch has finished the list is reloaded with the batch kept in it, so the rows just
  // recalled stay on screen with their state instead of vanishing from "not yet recalled".
  const showBatch = (batchId: string) => {
    const next = new URLSearchParams(params);
    next.set("batch", batchId);
    setParams(next, { preventScrollReset: true, replace: true });
  };
  const [selected, setSelected] = useState<Set<string>>(new Set());
  // A new list (filter changed, batch sent) starts with nothing selected.
  const [rowsSeen, setRowsSeen] = useState(rows);
  if (rows !== rowsSeen) {
    setRowsSeen(rows);
    setSelected(new Set());
  }
  const batch = send.data?.batch;
  return (
    <>
      <PageHeader
        title="Recalls"
        description={`Patients due for their routine exam. Interval: the optometrist's plan on the last exam, else the visit type's, else ${settings.child} months under ${settings.under} and ${settings.adult} months from ${settings.under} (practice settings; common practice).`}
      />
      <ScheduleNav />
      <Form
        // A link that changes the filters (such as "Due this month") shows them in the fields too.
        key={`${filters.dueFrom ?? ""}|${dueBy}|${filters.group}`}
        method="get"
        className="mb-4 flex flex-wrap items-end gap-3"
        aria-describedby={filterError ? "recall-filter-error" : undefined}
      >
        <div>
          <label htmlFor="dueFrom" className="mb-1 block text-sm font-semibold">
            Due from (optional)
          </label>
          <Input
            id="dueFrom"
            type="date"
            name="dueFrom"
            defaultValue={filters.dueFrom ?? ""}
            className="w-44"
            aria-describedby="dueFrom-hint"
            aria-invalid={filterError ? true : undefined}
          />
          <span id="dueFrom-hint" className="sr-only">
            Leave empty to include everyone already overdue.
          </span>
        </div>
        <div>
          <label htmlFor="dueBy" className="mb-1 block text-sm font-semibold">
            Due on or before
          </label>
          <Input id="dueBy" type="date" name="dueBy" defaultValue={dueBy} className="w-44" />
        </div>
        <div>
          <label htmlFor="group" className="mb-1 block text-sm font-semibold">
            Age group
          </label>
          <Select id="group" name="group" defaultValue={filters.group} className="w-40">
            <option value="all">All</option>
            <option value="child">Children</option>
            <option value="adult">Adults</option>
          </Select>
        </div>
        <label className="flex items-center gap-2 pb-2 text-sm">
          <input
            type="checkbox"
            name="booked"
            value="1"
            defaultChecked={filters.includeBooked}
            className="size-4 accent-accent-700"
          />{" "}
          Include patients already booked
        </label>
        <label className="flex items-center gap-2 pb-2 text-sm">
          <input
            type="checkbox"
            name="recalled"
            value="1"
            defaultChecked={filters.includeRecalled}
            className="size-4 accent-accent-700"
          />{" "}
          Include patients already recalled
        </label>
        <Button type="submit" variant="secondary">
          Filter
        </Button>
        <Link
          to={`?dueFrom=${thisMonth.from}&dueBy=${thisMonth.to}`}
          className="pb-2 text-sm font-semibold text-accent-700 underline underline-offset-4"
        >
          Due this month
        </Link>
      </Form>
      {filterError ? (
        <div className="mb-4" id="recall-filter-error">
          <Notice tone="error" title="Check the dates">
            {filterError}
          </Notice>
        </div>
      ) : null}
      {batch ? (
        <div className="mb-4 rounded-lg border border-line bg-white p-4">
          <BatchProgress
            key={batch.batchId}
            batchId={batch.batchId}
            total={batch.total}
            onFinished={() => showBatch(batch.batchId)}
          />
          {batch.alreadyRecalled ? (
            <p className="mt-2 text-sm text-muted">
              {batch.alreadyRecalled} already had a recall for this due date and were left out.
            </p>
          ) : null}
        </div>
      ) : null}
      {send.data?.error ? (
        <div className="mb-4">
          <Notice tone="error" title="Not sent">
            {send.data.error}
          </Notice>
        </div>
      ) : null}
      <send.Form method="post">
        <input type="hidden" name="intent" value="send" />
        <Card
          title={`${rows.length} patient${rows.length === 1 ? "" : "s"} due ${filters.dueFrom ? `from ${formatDob(filters.dueFrom)} ` : ""}by ${formatDob(dueBy)}`}
        >
          <RecallTable
            rows={rows}
            selected={selected}
            setSelected={setSelected}
            multiSite={loaderData.multiSite}
            today={today}
          />
        </Card>
        {/* Stays at the bottom of the window while a long list scrolls under it. */}
        <div
          className="sticky bottom-0 z-10 -mx-1 mt-2 flex flex-wrap items-center gap-3 rounded-t-lg border border-line bg-white px-4 py-3 shadow-lg"
          data-testid="recall-send-bar"
        >
          <Button type="submit" pending={send.state !== "idle"} disabled={selected.size === 0}>
            Send recall e-mails ({selected.size})
          </Button>
          <span className="text-sm text-muted">
            {selected.size === 0 ? "Tick the patients to recall." : `${selected.size} chosen.`}
          </span>
        </div>
      </send.Form>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Recalls · Dioptra" }];
