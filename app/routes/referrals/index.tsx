import { createColumnHelper } from "@tanstack/react-table";
import { Form, Link, useFetcher } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/index";
import { trackingPage, TRACKING_SORTS } from "~/models/referrals/referrals.server";
import { DataTable } from "~/components/data-table";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { PageHeader } from "~/components/page-header";
import { Button, buttonClass } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input, Select } from "~/components/ui/input";
import { Notice, StatusBadge } from "~/components/ui/notice";
import { STATUS_LABEL, STATUS_TONE, URGENCY_LABEL, type DisplayStatus } from "~/lib/referrals";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";

const FILTERS: DisplayStatus[] = ["draft", "queued", "sent", "acknowledged", "seen", "replied", "overdue", "withdrawn"];
const PAGE_SIZE = 25;

const querySchema = z.object({
  status: z.enum(FILTERS).nullable().catch(null),
  q: z.string().trim().max(100).catch(""),
  sort: z.enum(TRACKING_SORTS).nullable().catch(null),
  dir: z.enum(["asc", "desc"]).catch("asc"),
  page: z.coerce.number().int().min(1).max(100_000).catch(1),
});

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireRole(request, STAFF_ROLES);
  const params = new URL(request.url).searchParams;
  const query = querySchema.parse({
    status: params.get("status"),
    q: params.get("q") ?? "",
    sort: params.get("sort"),
    dir: params.get("dir") ?? undefined,
    page: params.get("page") ?? undefined,
  });
  const { rows, total, all, counts } = await trackingPage({ ...query, pageSize: PAGE_SIZE });
  return { query, rows, total, all, counts, canCompose: user.role !== "receptionist" };
}

type Row = Route.ComponentProps["loaderData"]["rows"][number];
const col = createColumnHelper<Row>();

function ChaseButton({ row }: { row: Row }) {
  const fetcher = useFetcher();
  const done = fetcher.state === "idle" && fetcher.data === undefined ? false : fetcher.state === "idle";
  if (!row.canChase) return null;
  return (
    <fetcher.Form method="post" action={`/referrals/${row.id}`}>
      <Button
        type="submit"
        name="intent"
        value="chase"
        variant="secondary"
        className="px-3 py-1"
        pending={fetcher.state !== "idle"}
        disabled={done}
      >
        {done ? "Reminder sent" : "Chase"}
        <span className="sr-only"> referral {row.reference}</span>
      </Button>
    </fetcher.Form>
  );
}

const columns = [
  col.accessor("reference", {
    header: "Referral",
    cell: (c) => (
      <Link
        to={`/referrals/${c.row.original.id}`}
        className="font-semibold text-accent-700 underline underline-offset-4"
      >
        {c.getValue()}
      </Link>
    ),
  }),
  col.accessor("patient", { header: "Patient" }),
  col.accessor("recipient", { header: "Recipient" }),
  col.accessor("urgency", { header: "Urgency", cell: (c) => URGENCY_LABEL[c.getValue()] }),
  col.accessor("status", {
    header: "Status",
    cell: (c) => (
      <span className="flex flex-col items-start gap-1">
        <StatusBadge tone={STATUS_TONE[c.getValue()]}>{STATUS_LABEL[c.getValue()]}</StatusBadge>
        {c.row.original.delivery === "failed" ? (
          <span className="text-xs font-semibold text-red-800">E-mail failed: {c.row.original.deliveryError}</span>
        ) : null}
        {c.row.original.delivery === "queued" && c.row.original.deliveryError ? (
          <span className="text-xs text-muted">Retrying: {c.row.original.deliveryError}</span>
        ) : null}
      </span>
    ),
  }),
  col.accessor("sentOn", { header: "Sent", cell: (c) => c.getValue() ?? "—" }),
  col.accessor("dueOn", { header: "To be seen by", cell: (c) => c.getValue() ?? "—" }),
  col.accessor("appointmentOn", { header: "Appointment", cell: (c) => c.getValue() ?? "—" }),
  col.display({
    id: "actions",
    header: () => <span className="sr-only">Actions</span>,
    cell: (c) => <ChaseButton row={c.row.original} />,
  }),
];

export default function Referrals({ loaderData }: Route.ComponentProps) {
  const { query } = loaderData;
  const filter = query.status;
  const overdue = loaderData.counts.overdue ?? 0;
  return (
    <>
      <PageHeader
        title="Referrals"
        description="Every referral letter, from draft to the recipient's reply. Overdue means the patient has not been seen within the urgency's time frame."
        actions={
          loaderData.canCompose ? (
            <Link to="/referrals/new" className={buttonClass("primary")}>
              New referral
            </Link>
          ) : null
        }
      />
      {overdue ? (
        <div className="mb-6">
          <Notice tone="warning" title={`${overdue} referral${overdue === 1 ? " is" : "s are"} overdue`}>
            The patient has not been seen within the time frame of the urgency. Chase the recipient with a reminder (at
            most every three days), or call them.{" "}
            <Link to="?status=overdue" className="font-semibold underline underline-offset-4">
              Show the overdue ones
            </Link>
          </Notice>
        </div>
      ) : null}
      <Card>
        <Form method="get" className="mb-4 flex flex-wrap items-end gap-3">
          {query.sort ? (
            <>
              <input type="hidden" name="sort" value={query.sort} />
              <input type="hidden" name="dir" value={query.dir} />
            </>
          ) : null}
          <div>
            <label htmlFor="status-filter" className="mb-1 block text-sm font-semibold">
              Show
            </label>
            <Select
              id="status-filter"
              name="status"
              defaultValue={filter ?? ""}
              className="w-64"
              onChange={(e) => e.currentTarget.form?.requestSubmit()}
            >
              <option value="">All referrals ({loaderData.all})</option>
              {FILTERS.map((f) => (
                <option key={f} value={f}>
                  {STATUS_LABEL[f]} ({loaderData.counts[f] ?? 0})
                </option>
              ))}
            </Select>
          </div>
          <div>
            <label htmlFor="patient-filter" className="mb-1 block text-sm font-semibold">
              Patient
            </label>
            <Input
              id="patient-filter"
              name="q"
              type="search"
              defaultValue={query.q}
              placeholder="Name, date of birth, phone or e-mail"
              className="w-72"
            />
          </div>
          <Button type="submit" variant="secondary">
            Filter
          </Button>
        </Form>
        <DataTable
          data={loaderData.rows}
          columns={columns}
          getRowId={(r) => r.id}
          caption={`Referrals${filter ? `: ${STATUS_LABEL[filter]}` : ""}`}
          empty={
            query.q
              ? `No referral of a patient matching “${query.q}”${filter ? " has this status" : ""}.`
              : filter
                ? "No referral has this status."
                : "No referrals yet."
          }
          sort={{ sort: query.sort, dir: query.dir }}
          paging={{ page: query.page, pageSize: PAGE_SIZE, total: loaderData.total, noun: ["referral", "referrals"] }}
        />
      </Card>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Referrals · Dioptra" }];

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
