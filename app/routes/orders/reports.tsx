import { Form, Link } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/reports";
import { PageHeader } from "~/components/page-header";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";
import { ORDER_STATES, orderLabel, STATE_LABEL } from "~/lib/orders/states";
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

export default function OrderReports({ loaderData: d }: Route.ComponentProps) {
  const counts = new Map(d.byState.map((r) => [r.state, r]));
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
          <table className="w-full text-left text-sm">
            <thead>
              <tr className="border-b border-line">
                <th className="py-1 pr-3">State</th>
                <th className="py-1 pr-3 text-right">Orders</th>
                <th className="py-1 pr-3 text-right">Longest in this state</th>
                <th className="py-1 text-right">Overdue</th>
              </tr>
            </thead>
            <tbody>
              {ORDER_STATES.map((s) => {
                const r = counts.get(s);
                return (
                  <tr key={s} className="border-b border-line">
                    <td className="py-1 pr-3">{STATE_LABEL[s]}</td>
                    <td className="py-1 pr-3 text-right">{r?.n ?? 0}</td>
                    <td className="py-1 pr-3 text-right">{r?.oldest_days != null ? `${r.oldest_days} days` : "—"}</td>
                    <td className="py-1 text-right">{s === "sent_to_lab" ? (r?.overdue ?? 0) : ""}</td>
                  </tr>
                );
              })}
            </tbody>
          </table>
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
          {d.remade.length ? (
            <table className="w-full text-left text-sm">
              <thead>
                <tr className="border-b border-line">
                  <th className="py-1 pr-3">Order</th>
                  <th className="py-1 pr-3">When</th>
                  <th className="py-1 pr-3">Lab</th>
                  <th className="py-1 pr-3">Reason</th>
                  <th className="py-1">By</th>
                </tr>
              </thead>
              <tbody>
                {d.remade.map((r) => (
                  <tr key={`${r.id}-${r.at}`} className="border-b border-line">
                    <td className="py-1 pr-3">
                      <Link to={`/orders/${r.id}`} className="font-semibold text-accent-700 underline">
                        {orderLabel(r.number)}
                      </Link>
                    </td>
                    <td className="py-1 pr-3">{r.at.slice(0, 10)}</td>
                    <td className="py-1 pr-3">{r.lab}</td>
                    <td className="py-1 pr-3">{r.reason}</td>
                    <td className="py-1">{r.actor ?? "—"}</td>
                  </tr>
                ))}
              </tbody>
            </table>
          ) : (
            <p className="text-sm text-muted">No remakes in this period.</p>
          )}
        </Card>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Order reports · Dioptra" }];
