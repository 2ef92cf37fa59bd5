import { createColumnHelper } from "@tanstack/react-table";
import { Form, Link } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/index";
import { DataTable } from "~/components/data-table";
import { BillingNav, InvoiceStatusBadge } from "~/components/billing/invoice-status";
import { PageHeader } from "~/components/page-header";
import { buttonClass } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input, Select } from "~/components/ui/input";
import { invoiceStatusEnum } from "~/db/schema";
import { requireRole } from "~/utils/auth.server";
import { BILLING_ROLES } from "~/models/billing/invoices.server";
import { invoiceListPage } from "~/models/billing/invoice-list.server";

const PAGE_SIZE = 25;
const filterSchema = z.object({
  status: z.enum([...invoiceStatusEnum.enumValues, "due", "all"]).catch("all"),
  q: z.string().trim().max(80).catch(""),
  page: z.coerce.number().int().min(1).max(100_000).catch(1),
});

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, BILLING_ROLES);
  const url = new URL(request.url);
  const f = filterSchema.parse(Object.fromEntries(url.searchParams));
  return { filter: f, ...(await invoiceListPage(f, PAGE_SIZE)) };
}

type Row = Awaited<ReturnType<typeof loader>>["rows"][number];
const col = createColumnHelper<Row>();
const columns = [
  col.accessor("label", {
    header: "Invoice",
    cell: (c) => (
      <Link
        to={`/billing/invoices/${c.row.original.id}`}
        className="font-semibold text-accent-700 underline underline-offset-4"
      >
        {c.getValue()}
      </Link>
    ),
  }),
  col.accessor("patient", { header: "Patient" }),
  col.accessor("date", { header: "Date" }),
  col.accessor("status", { header: "Status", cell: (c) => <InvoiceStatusBadge status={c.getValue()} /> }),
  col.accessor("total", { header: "Total", meta: { align: "right" } }),
  col.accessor("due", { header: "Due", meta: { align: "right" } }),
];

const STATUS_FILTERS = [
  ["all", "All"],
  ["due", "Awaiting payment"],
  ["draft", "Drafts"],
  ["open", "Open"],
  ["partially_paid", "Part paid"],
  ["paid", "Paid"],
  ["void", "Void"],
] as const;

export default function Invoices({ loaderData }: Route.ComponentProps) {
  const { rows, filter, total, totalIsExact } = loaderData;
  return (
    <>
      <PageHeader
        title="Billing"
        description="Invoices, payments and takings."
        actions={
          <Link to="/billing/invoices/new" className={buttonClass("primary")}>
            New invoice
          </Link>
        }
      />
      <BillingNav />
      <Card>
        <Form method="get" className="mb-4 flex flex-wrap items-end gap-3" role="search" aria-label="Filter invoices">
          <div>
            <label htmlFor="status" className="mb-1 block text-sm font-semibold">
              Status
            </label>
            <Select id="status" name="status" defaultValue={filter.status} className="w-52">
              {STATUS_FILTERS.map(([v, l]) => (
                <option key={v} value={v}>
                  {l}
                </option>
              ))}
            </Select>
          </div>
          <div className="min-w-56 flex-1">
            <label htmlFor="q" className="mb-1 block text-sm font-semibold">
              Patient or invoice number
            </label>
            <Input id="q" name="q" type="search" defaultValue={filter.q} />
          </div>
          <button type="submit" className={buttonClass("secondary")}>
            Show
          </button>
        </Form>
        <DataTable
          data={rows}
          columns={columns}
          getRowId={(r) => r.id}
          caption="Invoices, newest first"
          empty="No invoices match."
          paging={{ page: filter.page, pageSize: PAGE_SIZE, total, totalIsExact, noun: ["invoice", "invoices"] }}
        />
      </Card>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Billing · Dioptra" }];
