import { dateTimeFormat } from "~/lib/format/intl";
import { createColumnHelper } from "@tanstack/react-table";
import { data, Form, Link } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/takings";
import { BillingNav } from "~/components/billing/invoice-status";
import { DataTable } from "~/components/data-table";
import { METHOD_LABEL } from "~/models/billing/documents.server";
import { BILLING_ROLES, invoiceLabel, practiceBilling } from "~/models/billing/invoices.server";
import { parsePeriod, takings, todayIn } from "~/models/billing/takings.server";
import { PageHeader } from "~/components/page-header";
import { buttonClass } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input } from "~/components/ui/input";
import { Notice, StatusBadge } from "~/components/ui/notice";
import { formatMoney } from "~/lib/format";
import { requireRole } from "~/utils/auth.server";
import { activeSites, siteChoice } from "~/models/schedule/sites.server";
import { Select } from "~/components/ui/input";

const PAGE_SIZE = 50;

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, BILLING_ROLES);
  const practice = await practiceBilling();
  const url = new URL(request.url);
  const today = todayIn(practice.timeZone);
  const period = parsePeriod(url.searchParams, today);
  const page = z.coerce
    .number()
    .int()
    .min(1)
    .max(100_000)
    .catch(1)
    .parse(url.searchParams.get("page") ?? undefined);
  const sites = await activeSites();
  const { site, setCookie } = await siteChoice(request, sites);
  const t = await takings(period, site === "all" ? undefined : site);
  const cur = t.currency;
  const time = dateTimeFormat("en-GB", {
    timeZone: t.timeZone,
    day: "numeric",
    month: "short",
    hour: "2-digit",
    minute: "2-digit",
  });
  const title =
    period.kind === "day"
      ? dateTimeFormat("en-GB", {
          timeZone: "UTC",
          weekday: "long",
          day: "numeric",
          month: "long",
          year: "numeric",
        }).format(new Date(`${period.day}T12:00:00Z`))
      : dateTimeFormat("en-GB", { timeZone: "UTC", month: "long", year: "numeric" }).format(
          new Date(`${period.month}-15T12:00:00Z`),
        );
  return data(
    {
      site,
      sites: sites.map(({ id, name }) => ({ id, name })),
      period,
      title,
      today,
      csvHref: `/billing/takings.csv?${period.kind === "day" ? `day=${period.day}` : `month=${period.month}`}`,
      byMethod: t.byMethod.map((m) => ({
        label: METHOD_LABEL[m.method],
        count: m.count,
        received: formatMoney(m.receivedMinor, cur),
        refunded: formatMoney(m.refundedMinor, cur),
        net: formatMoney(m.netMinor, cur),
      })),
      totals: {
        received: formatMoney(t.totals.receivedMinor, cur),
        refunded: formatMoney(t.totals.refundedMinor, cur),
        net: formatMoney(t.totals.netMinor, cur),
      },
      page,
      entryCount: t.entries.length,
      entries: t.entries.slice((page - 1) * PAGE_SIZE, page * PAGE_SIZE).map((e) => ({
        key: `${e.kind}-${e.id}`,
        when: time.format(e.at),
        kind: e.kind,
        status: e.status,
        method: METHOD_LABEL[e.method],
        amount: formatMoney(e.amountMinor, cur),
        invoiceId: e.invoiceId,
        invoice: invoiceLabel(e.invoiceNumber),
        patient: e.patient,
        note: e.reference,
      })),
      flagged: t.flagged.length,
      invoicesTouched: t.invoicesTouched,
      mismatches: t.mismatches.map((m) => ({
        ...m,
        paid: formatMoney(m.paidMinor, cur),
        payments: formatMoney(m.paymentsMinor, cur),
      })),
    },
    setCookie ? { headers: { "set-cookie": setCookie } } : undefined,
  );
}

type LoaderData = Route.ComponentProps["loaderData"];
type MethodRow = LoaderData["byMethod"][number];
type EntryRow = LoaderData["entries"][number];

const methodCol = createColumnHelper<MethodRow>();
const methodColumns = (totals: LoaderData["totals"]) => [
  methodCol.accessor("label", { header: "Method", footer: "Total", meta: { rowHeader: true } }),
  methodCol.accessor("count", { header: "Payments", footer: "", meta: { align: "right" } }),
  methodCol.accessor("received", { header: "Received", footer: totals.received, meta: { align: "right" } }),
  methodCol.accessor("refunded", { header: "Refunded", footer: totals.refunded, meta: { align: "right" } }),
  methodCol.accessor("net", { header: "Net", footer: totals.net, meta: { align: "right" } }),
];

const entryCol = createColumnHelper<EntryRow>();
const entryColumns = [
  entryCol.accessor("when", { header: "When" }),
  entryCol.accessor("invoice", {
    header: "Invoice",
    cell: (c) => (
      <Link
        to={`/billing/invoices/${c.row.original.invoiceId}`}
        className="font-semibold text-accent-700 underline underline-offset-4"
      >
        {c.getValue()}
      </Link>
    ),
  }),
  entryCol.accessor("patient", { header: "Patient" }),
  entryCol.accessor("method", { header: "Method" }),
  entryCol.accessor("kind", {
    header: "Kind",
    cell: ({ row: { original: e } }) =>
      e.status === "flagged" ? (
        <StatusBadge tone="error">Flagged</StatusBadge>
      ) : e.kind === "refund" ? (
        <StatusBadge tone="warning">Refund</StatusBadge>
      ) : (
        <StatusBadge tone="success">Payment</StatusBadge>
      ),
  }),
  entryCol.accessor("amount", { header: "Amount", meta: { align: "right" } }),
];

export default function Takings({ loaderData: d }: Route.ComponentProps) {
  return (
    <>
      <PageHeader
        title="Takings"
        description={d.title}
        actions={
          <a href={d.csvHref} className={buttonClass("secondary")} download>
            Download CSV
          </a>
        }
      />
      <BillingNav />
      <Card className="mb-6">
        <div className="flex flex-wrap items-end gap-6">
          <Form method="get" className="flex items-end gap-2">
            <div>
              <label htmlFor="day" className="mb-1 block text-sm font-semibold">
                Day
              </label>
              <Input id="day" name="day" type="date" defaultValue={d.period.kind === "day" ? d.period.day : d.today} />
            </div>
            {d.sites.length > 1 ? (
              <div>
                <label htmlFor="takings-site" className="mb-1 block text-sm font-semibold">
                  Site
                </label>
                <Select id="takings-site" name="site" defaultValue={d.site}>
                  <option value="all">Every site</option>
                  {d.sites.map((s) => (
                    <option key={s.id} value={s.id}>
                      {s.name}
                    </option>
                  ))}
                </Select>
              </div>
            ) : null}
            <button type="submit" className={buttonClass("secondary")}>
              Show day
            </button>
          </Form>
          <Form method="get" className="flex items-end gap-2">
            <div>
              <label htmlFor="month" className="mb-1 block text-sm font-semibold">
                Month
              </label>
              <Input
                id="month"
                name="month"
                type="month"
                defaultValue={d.period.kind === "month" ? d.period.month : d.today.slice(0, 7)}
              />
            </div>
            <button type="submit" className={buttonClass("secondary")}>
              Show month
            </button>
          </Form>
        </div>
      </Card>
      <div className="mb-6">
        {d.mismatches.length ? (
          <Notice tone="error" title="Does not reconcile">
            {d.mismatches
              .map(
                (m) => `${m.label}: the invoice shows ${m.paid} paid, its payments less refunds come to ${m.payments}.`,
              )
              .join(" ")}
          </Notice>
        ) : (
          <Notice tone="success" title="Reconciles with the invoices">
            {d.invoicesTouched} invoice{d.invoicesTouched === 1 ? "" : "s"} had money in or out in this period; each
            one's paid amount equals its payments less refunds.
          </Notice>
        )}
        {d.flagged ? (
          <div className="mt-3">
            <Notice tone="warning" title={`${d.flagged} flagged online payment${d.flagged === 1 ? "" : "s"}`}>
              Not counted in the takings: the amount did not match the invoice. Check them in Stripe.
            </Notice>
          </div>
        ) : null}
      </div>
      <Card title="By method" className="mb-6">
        <DataTable
          data={d.byMethod}
          columns={methodColumns(d.totals)}
          getRowId={(m) => m.label}
          caption="Takings by method"
          empty="Nothing received or refunded in this period."
          testId="takings-by-method"
        />
      </Card>
      <Card title="Every payment and refund">
        <DataTable
          data={d.entries}
          columns={entryColumns}
          getRowId={(e) => e.key}
          caption="Every payment and refund, oldest first"
          empty="Nothing received or refunded in this period."
          paging={{ page: d.page, pageSize: PAGE_SIZE, total: d.entryCount, noun: ["entry", "entries"] }}
        />
      </Card>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Takings · Dioptra" }];
