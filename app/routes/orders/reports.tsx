import { createColumnHelper } from "@tanstack/react-table";
import { Form, Link } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/reports";
import { DataTable } from "~/components/data-table";
import { PageHeader } from "~/components/page-header";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";
import { ORDER_STATES, orderLabel, STATE_LABEL, type OrderStateName } from "~/lib/orders/states";
import { practiceOrderSettings } from "~/models/orders/orders.server";
import { examsToOrders, ordersByState, overdueAtLab, remakes } from "~/models/orders/reports.server";
import { requireRole } from "~/utils/auth.server";

const day = z
  .string()
  .regex(/^\d{4}-\d{2}-\d{2}$/)
  .refine((s) => !Number.isNaN(Date.parse(s)));

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ["owner"]);
  const url = new URL(request.url);
  const today = new Date().toISOString().slice(0, 10);
  const monthAgo = new Date(Date.now() - 30 * 86_400_000).toISOString().slice(0, 10);
  const from = day.safeParse(url.searchParams.get("from"));
  const to = day.safeParse(url.searchParams.get("to"));
  const period = { from: from.success ? from.data : monthAgo, to: to.success ? to.data : today };
  const error =
    (url.searchParams.has("from") && !from.success) || (url.searchParams.has("to") && !to.success)
      ? "Dates are given as YYYY-MM-DD; the last 30 days are shown instead."
      : period.from > period.to
        ? "The period starts after it ends."
        : null;
  const settings = await practiceOrderSettings();
  const [byState, overdue, remade, conversion] = await Promise.all([
    ordersByState(settings.labOverdueDays),
    overdueAtLab(settings.labOverdueDays),
    remakes(period),
    examsToOrders(period),
  ]);
  return { period, error, overdueDays: settings.labOverdueDays, byState, overdue, remade, conversion };
}

type Data = Awaited<ReturnType<typeof loader>>;
type StateRow = { state: OrderStateName; n?: number; oldest_days?: number | null; overdue?: number };
const byState = createColumnHelper<StateRow>();
const stateColumns = [
  byState.accessor("state", { header: "State", cell: (c) => STATE_LABEL[c.getValue()] }),
  byState.accessor("n", { header: "Orders", meta: { align: "right" }, cell: (c) => c.getValue() ?? 0 }),
  byState.accessor("oldest_days", {
    header: "Longest in this state",
    meta: { align: "right" },
    cell: (c) => (c.getValue() != null ? `${c.getValue()} days` : "—"),
  }),
  byState.accessor("overdue", {
    header: "Overdue",
    meta: { align: "right" },
    cell: (c) => (c.row.original.state === "sent_to_lab" ? (c.getValue() ?? 0) : ""),
  }),
];
const remake = createColumnHelper<Data["remade"][number]>();
const remakeColumns = [
  remake.accessor("number", {
    header: "Order",
    cell: (c) => (
      <Link to={`/orders/${c.row.original.id}`} className="font-semibold text-accent-700 underline">
        {orderLabel(c.getValue())}
      </Link>
    ),
  }),
  remake.accessor("at", { header: "When", cell: (c) => c.getValue().slice(0, 10) }),
  remake.accessor("lab", { header: "Lab" }),
  remake.accessor("reason", { header: "Reason" }),
  remake.accessor("actor", { header: "By", cell: (c) => c.getValue() ?? "—" }),
];

export default function OrderReports({ loaderData: d }: Route.ComponentProps) {
  const counts = new Map(d.byState.map((r) => [r.state, { n: r.n, oldest_days: r.oldest_days, overdue: r.overdue }]));
  return (
    <>
      <PageHeader
        title="Order reports"
        description={
          <>
            Overdue at the lab means more than {d.overdueDays} days since it was sent (
            <Link to="/settings/labs" className="underline">
              change
            </Link>
            ).
          </>
        }
      />
      <Form method="get" className="mb-6 flex flex-wrap items-end gap-3">
        <div>
          <label htmlFor="from" className="mb-1 block text-sm font-semibold">
            From
          </label>
          <Input id="from" name="from" type="date" defaultValue={d.period.from} />
        </div>
        <div>
          <label htmlFor="to" className="mb-1 block text-sm font-semibold">
            To
          </label>
          <Input id="to" name="to" type="date" defaultValue={d.period.to} />
        </div>
        <Button type="submit" variant="secondary">
          Show
        </Button>
      </Form>
      {d.error ? (
        <div className="mb-6">
          <Notice tone="warning" title="Period">
            {d.error}
          </Notice>
        </div>
      ) : null}
      <div className="grid gap-6 lg:grid-cols-2">
        <Card title="Orders by state">
          <DataTable
            data={ORDER_STATES.map((state) => ({ state, ...counts.get(state) }))}
            columns={stateColumns}
            getRowId={(r) => r.state}
            caption="Orders by state"
            empty="No orders."
          />
          {d.overdue.length ? (
            <ul className="mt-4 space-y-1 text-sm">
              {d.overdue.map((o) => (
                <li key={o.id}>
                  <Link to={`/orders/${o.id}`} className="font-semibold text-accent-700 underline">
                    {orderLabel(o.number)}
                  </Link>{" "}
                  — {o.patient}, at {o.lab} for {o.days} days
                </li>
              ))}
            </ul>
          ) : (
            <p className="mt-4 text-sm text-muted">Nothing overdue at the lab.</p>
          )}
        </Card>
        <Card title="Exams that led to an order">
          <p className="text-3xl font-semibold">
            {d.conversion.share === null ? "—" : `${Math.round(d.conversion.share * 1000) / 10} %`}
          </p>
          <p className="text-sm text-muted">
            {d.conversion.withOrder} of {d.conversion.exams} signed exams from {d.period.from} to {d.period.to} have an
            order (not cancelled) made from one of their prescriptions.
          </p>
        </Card>
        <Card title={`Remakes (${d.remade.length})`} className="lg:col-span-2">
          <DataTable
            data={d.remade}
            columns={remakeColumns}
            getRowId={(r) => `${r.id}-${r.at}`}
            caption="Remakes"
            empty="No remakes in this period."
          />
        </Card>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Order reports · Dioptra" }];
