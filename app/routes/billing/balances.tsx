import { createColumnHelper } from "@tanstack/react-table";
import { Form, Link } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/balances";
import { BillingNav } from "~/components/billing/invoice-status";
import { DataTable } from "~/components/data-table";
import { PageHeader } from "~/components/page-header";
import { buttonClass } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input, Select } from "~/components/ui/input";
import { requireRole } from "~/utils/auth.server";
import { balancesPage } from "~/models/billing/invoice-list.server";
import { BILLING_ROLES } from "~/models/billing/invoices.server";

const PAGE_SIZE = 25;
const filterSchema = z.object({
  q: z.string().trim().max(80).catch(""),
  sort: z.enum(["owed", "oldest"]).catch("owed"),
  page: z.coerce.number().int().min(1).max(100_000).catch(1),
});

/** Patients who owe money: the unpaid part of their open and part-paid invoices, a page at a time. */
export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, BILLING_ROLES);
  const f = filterSchema.parse(Object.fromEntries(new URL(request.url).searchParams));
  const { total, totalOwed, rows } = await balancesPage(f, PAGE_SIZE);
  return { filter: f, total, totalOwed, rows };
}

type Row = Route.ComponentProps["loaderData"]["rows"][number];
const col = createColumnHelper<Row>();
const columns = [
  col.accessor("name", {
    header: "Patient",
    cell: (c) => (
      <Link
        to={`/patients/${c.row.original.patientId}`}
        className="font-semibold text-accent-700 underline underline-offset-4"
      >
        {c.getValue()}
      </Link>
    ),
  }),
  col.accessor("owed", { header: "Owed", meta: { align: "right" } }),
  col.accessor("invoices", { header: "Invoices", meta: { align: "right" } }),
  col.accessor("oldest", { header: "Oldest unpaid since" }),
  col.display({
    id: "actions",
    header: () => <span className="sr-only">Actions</span>,
    cell: ({ row: { original: r } }) => (
      <Link
        to={`/billing?status=due&q=${encodeURIComponent(r.name.split(", ").reverse().join(" "))}`}
        className="font-semibold text-accent-700 underline underline-offset-4"
      >
        Invoices<span className="sr-only"> of {r.name}</span>
      </Link>
    ),
  }),
];

export default function Balances({ loaderData }: Route.ComponentProps) {
  const { rows, filter, total, totalOwed } = loaderData;
  return (
    <>
      <PageHeader title="Outstanding balances" description="Patients with issued invoices not yet paid in full." />
      <BillingNav />
      <Card>
        <Form method="get" className="mb-4 flex flex-wrap items-end gap-3" role="search" aria-label="Filter balances">
          <div className="min-w-56 flex-1">
            <label htmlFor="q" className="mb-1 block text-sm font-semibold">
              Patient
            </label>
            <Input id="q" name="q" type="search" defaultValue={filter.q} />
          </div>
          <div>
            <label htmlFor="sort" className="mb-1 block text-sm font-semibold">
              Order
            </label>
            <Select id="sort" name="sort" defaultValue={filter.sort} className="w-56">
              <option value="owed">Largest balance first</option>
              <option value="oldest">Oldest unpaid invoice first</option>
            </Select>
          </div>
          <button type="submit" className={buttonClass("secondary")}>
            Show
          </button>
        </Form>
        <p className="mb-3 text-sm" data-testid="balances-summary">
          {total === 0
            ? "Nobody owes anything."
            : `${total} ${total === 1 ? "patient owes" : "patients owe"} ${totalOwed} in all.`}
        </p>
        <DataTable
          data={rows}
          columns={columns}
          getRowId={(r) => r.patientId}
          caption={
            filter.sort === "oldest"
              ? "Outstanding balances, oldest unpaid first"
              : "Outstanding balances, largest first"
          }
          empty={filter.q ? "Nobody matching this name owes anything." : "Nobody owes anything."}
          paging={{ page: filter.page, pageSize: PAGE_SIZE, total, noun: ["patient", "patients"] }}
        />
      </Card>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Outstanding balances · Dioptra" }];
