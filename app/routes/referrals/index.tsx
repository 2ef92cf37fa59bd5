import {
  createColumnHelper,
  flexRender,
  getCoreRowModel,
  getSortedRowModel,
  useReactTable,
  type SortingState,
} from "@tanstack/react-table";
import { useMemo, useState } from "react";
import { Form, Link, useFetcher, useSearchParams } from "react-router";
import type { Route } from "./+types/index";
import { trackingRows } from "~/models/referrals/referrals.server";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { PageHeader } from "~/components/page-header";
import { Button, buttonClass } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Select } from "~/components/ui/input";
import { Notice, StatusBadge } from "~/components/ui/notice";
import { STATUS_LABEL, STATUS_TONE, URGENCY_LABEL, type DisplayStatus } from "~/lib/referrals";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";

const FILTERS: DisplayStatus[] = ["draft", "queued", "sent", "acknowledged", "seen", "replied", "overdue", "withdrawn"];

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireRole(request, STAFF_ROLES);
  const rows = await trackingRows();
  const counts = Object.fromEntries(FILTERS.map((f) => [f, rows.filter((r) => r.status === f).length])) as Record<
    DisplayStatus,
    number
  >;
  return { rows, counts, canCompose: user.role !== "receptionist" };
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

export default function Referrals({ loaderData }: Route.ComponentProps) {
  const [params] = useSearchParams();
  const filter = params.get("status") as DisplayStatus | null;
  const [sorting, setSorting] = useState<SortingState>([]);
  const rows = useMemo(
    () => (filter && FILTERS.includes(filter) ? loaderData.rows.filter((r) => r.status === filter) : loaderData.rows),
    [loaderData.rows, filter],
  );
  const columns = useMemo(
    () => [
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
    ],
    [],
  );
  const table = useReactTable({
    data: rows,
    columns,
    state: { sorting },
    onSortingChange: setSorting,
    getCoreRowModel: getCoreRowModel(),
    getSortedRowModel: getSortedRowModel(),
  });
  const overdue = loaderData.counts.overdue;
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
              <option value="">All referrals ({loaderData.rows.length})</option>
              {FILTERS.map((f) => (
                <option key={f} value={f}>
                  {STATUS_LABEL[f]} ({loaderData.counts[f]})
                </option>
              ))}
            </Select>
          </div>
          <noscript>
            <Button type="submit" variant="secondary">
              Filter
            </Button>
          </noscript>
        </Form>
        {rows.length === 0 ? (
          <p className="py-6 text-muted">{filter ? "No referral has this status." : "No referrals yet."}</p>
        ) : (
          <div className="overflow-x-auto">
            <table className="w-full text-left text-sm">
              <caption className="sr-only">Referrals{filter ? `: ${STATUS_LABEL[filter]}` : ""}</caption>
              <thead className="border-b border-line text-muted">
                {table.getHeaderGroups().map((hg) => (
                  <tr key={hg.id}>
                    {hg.headers.map((h) => {
                      const sorted = h.column.getIsSorted();
                      return (
                        <th
                          key={h.id}
                          scope="col"
                          className="py-2 pr-4 font-semibold"
                          aria-sort={sorted === "asc" ? "ascending" : sorted === "desc" ? "descending" : undefined}
                        >
                          {h.column.getCanSort() && h.column.id !== "actions" ? (
                            <button
                              type="button"
                              onClick={h.column.getToggleSortingHandler()}
                              className="font-semibold hover:text-ink"
                            >
                              {flexRender(h.column.columnDef.header, h.getContext())}
                              <span aria-hidden="true">{sorted === "asc" ? " ▲" : sorted === "desc" ? " ▼" : ""}</span>
                            </button>
                          ) : (
                            flexRender(h.column.columnDef.header, h.getContext())
                          )}
                        </th>
                      );
                    })}
                  </tr>
                ))}
              </thead>
              <tbody className="divide-y divide-line">
                {table.getRowModel().rows.map((row) => (
                  <tr key={row.id}>
                    {row.getVisibleCells().map((cell) => (
                      <td key={cell.id} className="py-3 pr-4 align-top">
                        {flexRender(cell.column.columnDef.cell, cell.getContext())}
                      </td>
                    ))}
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
        )}
      </Card>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Referrals · Dioptra" }];

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
