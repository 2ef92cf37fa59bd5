import { createColumnHelper } from "@tanstack/react-table";
import { Form, Link } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/index";
import { DataTable } from "~/components/data-table";
import { PageHeader } from "~/components/page-header";
import { buttonClass } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input, Select } from "~/components/ui/input";
import { Button } from "~/components/ui/button";
import { StatusBadge } from "~/components/ui/notice";
import { daysBetween, ORDER_STATES, orderLabel, STATE_LABEL, type OrderStateName } from "~/lib/orders/states";
import { listOrders, ORDER_ROLES, ORDER_SORTS, practiceOrderSettings } from "~/models/orders/orders.server";
import { requireRole } from "~/utils/auth.server";

const PAGE_SIZE = 25;

const querySchema = z.object({
  state: z.string().catch("open"),
  q: z.string().trim().max(100).catch(""),
  sort: z.enum(ORDER_SORTS).nullable().catch(null),
  dir: z.enum(["asc", "desc"]).catch("asc"),
  page: z.coerce.number().int().min(1).max(100_000).catch(1),
});

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireRole(request, ORDER_ROLES);
  const params = new URL(request.url).searchParams;
  const query = querySchema.parse({
    state: params.get("state") ?? "open",
    q: params.get("q") ?? "",
    sort: params.get("sort"),
    dir: params.get("dir") ?? undefined,
    page: params.get("page") ?? undefined,
  });
  const raw = query.state;
  const state =
    raw === "all"
      ? undefined
      : raw === "open" || (ORDER_STATES as readonly string[]).includes(raw)
        ? (raw as OrderStateName | "open")
        : "open";
  const [{ rows, total }, settings] = await Promise.all([
    listOrders({ state, q: query.q, sort: query.sort, dir: query.dir, page: query.page, pageSize: PAGE_SIZE }),
    practiceOrderSettings(),
  ]);
  const now = new Date();
  return {
    isOwner: user.role === "owner",
    state: raw === "all" ? "all" : (state ?? "open"),
    query,
    total,
    overdueDays: settings.labOverdueDays,
    orders: rows.map((o) => ({
      ...o,
      label: orderLabel(o.number),
      days: daysBetween(o.stateChangedAt, now),
      createdAt: o.createdAt.toISOString(),
    })),
  };
}

type Row = Route.ComponentProps["loaderData"]["orders"][number];
const col = createColumnHelper<Row>();
const stateTone = (s: OrderStateName) =>
  s === "cancelled" || s === "remake" ? "warning" : s === "ready_to_collect" || s === "collected" ? "success" : "info";
const columns = (overdueDays: number) => [
  col.accessor("label", {
    header: "Order",
    cell: (c) => (
      <Link to={`/orders/${c.row.original.id}`} className="font-semibold text-accent-700 underline underline-offset-4">
        {c.getValue()}
      </Link>
    ),
  }),
  col.accessor("patientName", { header: "Patient" }),
  col.accessor("kind", {
    header: "What",
    enableSorting: false,
    cell: (c) =>
      c.getValue() === "spectacles"
        ? `Spectacles${c.row.original.frameLabel ? ` — ${c.row.original.frameLabel}` : ""}`
        : "Contact lenses",
  }),
  col.accessor("labName", { header: "Lab" }),
  col.accessor("state", {
    header: "State",
    cell: (c) => <StatusBadge tone={stateTone(c.getValue())}>{STATE_LABEL[c.getValue()]}</StatusBadge>,
  }),
  col.accessor("days", {
    header: "For",
    cell: (c) => (
      <>
        {c.getValue()} {c.getValue() === 1 ? "day" : "days"}
        {c.row.original.state === "sent_to_lab" && c.getValue() > overdueDays ? (
          <>
            {" "}
            <StatusBadge tone="error">Overdue at the lab</StatusBadge>
          </>
        ) : null}
      </>
    ),
  }),
];

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
      <Form method="get" className="mb-4 flex flex-wrap items-end gap-3">
        {loaderData.query.sort ? (
          <>
            <input type="hidden" name="sort" value={loaderData.query.sort} />
            <input type="hidden" name="dir" value={loaderData.query.dir} />
          </>
        ) : null}
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
        <div>
          <label htmlFor="order-patient" className="mb-1 block text-sm font-semibold">
            Patient
          </label>
          <Input
            id="order-patient"
            name="q"
            type="search"
            defaultValue={loaderData.query.q}
            placeholder="Name, date of birth, phone or e-mail"
            className="w-72"
          />
        </div>
        <Button type="submit" variant="secondary">
          Show
        </Button>
      </Form>
      <Card>
        <DataTable
          data={loaderData.orders}
          columns={columns(loaderData.overdueDays)}
          getRowId={(o) => o.id}
          caption="Orders"
          empty={loaderData.query.q ? `No order of a patient matching “${loaderData.query.q}”.` : "No orders to show."}
          sort={{ sort: loaderData.query.sort, dir: loaderData.query.dir }}
          paging={{
            page: loaderData.query.page,
            pageSize: PAGE_SIZE,
            total: loaderData.total,
            noun: ["order", "orders"],
          }}
        />
      </Card>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Orders · Dioptra" }];
