import { Form, Link } from "react-router";
import type { Route } from "./+types/index";
import { PageHeader } from "~/components/page-header";
import { buttonClass } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Select } from "~/components/ui/input";
import { Button } from "~/components/ui/button";
import { StatusBadge } from "~/components/ui/notice";
import { daysBetween, ORDER_STATES, orderLabel, STATE_LABEL, type OrderStateName } from "~/lib/orders/states";
import { listOrders, ORDER_ROLES, practiceOrderSettings } from "~/models/orders/orders.server";
import { requireRole } from "~/utils/auth.server";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireRole(request, ORDER_ROLES);
  const raw = new URL(request.url).searchParams.get("state") ?? "open";
  const state =
    raw === "all"
      ? undefined
      : raw === "open" || (ORDER_STATES as readonly string[]).includes(raw)
        ? (raw as OrderStateName | "open")
        : "open";
  const [rows, settings] = await Promise.all([listOrders({ state }), practiceOrderSettings()]);
  const now = new Date();
  return {
    isOwner: user.role === "owner",
    state: raw === "all" ? "all" : (state ?? "open"),
    overdueDays: settings.labOverdueDays,
    orders: rows.map((o) => ({
      ...o,
      label: orderLabel(o.number),
      days: daysBetween(o.stateChangedAt, now),
      createdAt: o.createdAt.toISOString(),
    })),
  };
}

export default function Orders({ loaderData }: Route.ComponentProps) {
  return (
    <>
      <PageHeader
        title="Orders"
        description="Spectacles and contact lenses, from the prescription to collection."
        actions={
          <>
            {loaderData.isOwner ? (
              <Link to="/orders/reports" className={buttonClass("secondary")}>
                Reports
              </Link>
            ) : null}
            <Link to="/orders/new" className={buttonClass()}>
              New order
            </Link>
          </>
        }
      />
      <Form method="get" className="mb-4 flex items-end gap-3">
        <div>
          <label htmlFor="state" className="mb-1 block text-sm font-semibold">
            Show
          </label>
          <Select id="state" name="state" defaultValue={loaderData.state}>
            <option value="open">Open orders</option>
            <option value="all">All orders</option>
            {ORDER_STATES.map((s) => (
              <option key={s} value={s}>
                {STATE_LABEL[s]}
              </option>
            ))}
          </Select>
        </div>
        <Button type="submit" variant="secondary">
          Show
        </Button>
      </Form>
      <Card>
        {loaderData.orders.length === 0 ? (
          <p className="text-muted">No orders to show.</p>
        ) : (
          <div className="overflow-x-auto">
            <table className="w-full text-left text-sm">
              <thead>
                <tr className="border-b border-line">
                  <th className="py-2 pr-3">Order</th>
                  <th className="py-2 pr-3">Patient</th>
                  <th className="py-2 pr-3">What</th>
                  <th className="py-2 pr-3">Lab</th>
                  <th className="py-2 pr-3">State</th>
                  <th className="py-2">For</th>
                </tr>
              </thead>
              <tbody>
                {loaderData.orders.map((o) => {
                  const overdue = o.state === "sent_to_lab" && o.days > loaderData.overdueDays;
                  return (
                    <tr key={o.id} className="border-b border-line">
                      <td className="py-2 pr-3">
                        <Link
                          to={`/orders/${o.id}`}
                          className="font-semibold text-accent-700 underline underline-offset-4"
                        >
                          {o.label}
                        </Link>
                      </td>
                      <td className="py-2 pr-3">{o.patientName}</td>
                      <td className="py-2 pr-3">
                        {o.kind === "spectacles"
                          ? `Spectacles${o.frameLabel ? ` — ${o.frameLabel}` : ""}`
                          : "Contact lenses"}
                      </td>
                      <td className="py-2 pr-3">{o.labName}</td>
                      <td className="py-2 pr-3">
                        <StatusBadge
                          tone={
                            o.state === "cancelled" || o.state === "remake"
                              ? "warning"
                              : o.state === "ready_to_collect" || o.state === "collected"
                                ? "success"
                                : "info"
                          }
                        >
                          {STATE_LABEL[o.state]}
                        </StatusBadge>
                      </td>
                      <td className="py-2">
                        {o.days} {o.days === 1 ? "day" : "days"}
                        {overdue ? (
                          <>
                            {" "}
                            <StatusBadge tone="error">Overdue at the lab</StatusBadge>
                          </>
                        ) : null}
                      </td>
                    </tr>
                  );
                })}
              </tbody>
            </table>
          </div>
        )}
      </Card>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Orders · Dioptra" }];
