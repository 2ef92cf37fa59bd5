/**
 * Takings: money received and refunded over a day or a month (in the practice's time zone), by
 * method, and a reconciliation against the invoices: each invoice's paid amount must equal its
 * received payments less their refunds.
 */
import { dateTimeFormat } from "~/lib/format/intl";
import { sql } from "drizzle-orm";
import { isCalendarDate, isCalendarMonth } from "~/lib/dates/calendar-date";
import { db } from "~/utils/db.server";
import { invoiceLabel, practiceBilling } from "./invoices.server";

export type Period = { kind: "day"; day: string } | { kind: "month"; month: string };

export function parsePeriod(params: URLSearchParams, today: string): Period {
  const month = params.get("month");
  if (isCalendarMonth(month)) return { kind: "month", month };
  const day = params.get("day");
  if (isCalendarDate(day)) return { kind: "day", day };
  return { kind: "day", day: today };
}

export function todayIn(timeZone: string, now = new Date()) {
  return dateTimeFormat("en-CA", { timeZone, year: "numeric", month: "2-digit", day: "2-digit" }).format(now);
}

function range(p: Period) {
  if (p.kind === "day") return { from: p.day, to: p.day };
  const [y, m] = p.month.split("-").map(Number) as [number, number];
  const last = new Date(Date.UTC(y, m, 0)).getUTCDate();
  return { from: `${p.month}-01`, to: `${p.month}-${String(last).padStart(2, "0")}` };
}

export type TakingsEntry = {
  kind: "payment" | "refund";
  id: string;
  at: Date;
  method: "cash" | "card_desk" | "card_online";
  amountMinor: number;
  invoiceId: string;
  invoiceNumber: number | null;
  patient: string;
  reference: string;
  status: string;
};

/** Money in and out over the period, at one site (by the invoice's site) or at all of them. */
export async function takings(period: Period, siteId?: string) {
  const practice = await practiceBilling();
  const tz = practice.timeZone;
  const { from, to } = range(period);
  const pays = await db.execute<{
    id: string;
    at: Date;
    method: TakingsEntry["method"];
    amount_minor: number;
    invoice_id: string;
    number: number | null;
    patient: string;
    reference: string;
    status: string;
  }>(sql`
    select p.id, p.received_at as at, p.method, p.amount_minor, p.invoice_id, i.number, pt.first_name || ' ' || pt.last_name as patient, p.reference, p.status
    from payments p join invoices i on i.id = p.invoice_id join patients pt on pt.id = i.patient_id
    where p.status in ('succeeded', 'flagged') and (p.received_at at time zone ${tz})::date between ${from}::date and ${to}::date
      ${siteId ? sql`and i.site_id = ${siteId}::uuid` : sql``}
    order by p.received_at`);
  const refs = await db.execute<{
    id: string;
    at: Date;
    method: TakingsEntry["method"];
    amount_minor: number;
    invoice_id: string;
    number: number | null;
    patient: string;
    reason: string;
  }>(sql`
    select r.id, r.created_at as at, p.method, r.amount_minor, p.invoice_id, i.number, pt.first_name || ' ' || pt.last_name as patient, r.reason
    from refunds r join payments p on p.id = r.payment_id join invoices i on i.id = p.invoice_id join patients pt on pt.id = i.patient_id
    where (r.created_at at time zone ${tz})::date between ${from}::date and ${to}::date
      ${siteId ? sql`and i.site_id = ${siteId}::uuid` : sql``}
    order by r.created_at`);
  const entries: TakingsEntry[] = [
    ...pays.rows.map((r) => ({
      kind: "payment" as const,
      id: r.id,
      at: new Date(r.at),
      method: r.method,
      amountMinor: Number(r.amount_minor),
      invoiceId: r.invoice_id,
      invoiceNumber: r.number,
      patient: r.patient,
      reference: r.reference,
      status: r.status,
    })),
    ...refs.rows.map((r) => ({
      kind: "refund" as const,
      id: r.id,
      at: new Date(r.at),
      method: r.method,
      amountMinor: -Number(r.amount_minor),
      invoiceId: r.invoice_id,
      invoiceNumber: r.number,
      patient: r.patient,
      reference: r.reason,
      status: "refunded",
    })),
  ].sort((a, b) => a.at.getTime() - b.at.getTime());

  const methods = ["cash", "card_desk", "card_online"] as const;
  const byMethod = methods.map((m) => {
    const received = entries
      .filter((e) => e.kind === "payment" && e.status === "succeeded" && e.method === m)
      .reduce((a, e) => a + e.amountMinor, 0);
    const refunded = entries
      .filter((e) => e.kind === "refund" && e.method === m)
      .reduce((a, e) => a - e.amountMinor, 0);
    const count = entries.filter((e) => e.kind === "payment" && e.status === "succeeded" && e.method === m).length;
    return { method: m, count, receivedMinor: received, refundedMinor: refunded, netMinor: received - refunded };
  });
  const flagged = entries.filter((e) => e.status === "flagged");

  // Reconciliation of every invoice touched in the period, over its whole life.
  const ids = [...new Set(entries.map((e) => e.invoiceId))];
  const mismatches: { invoiceId: string; label: string; paidMinor: number; paymentsMinor: number }[] = [];
  if (ids.length) {
    const rec = await db.execute<{ id: string; number: number | null; paid_minor: number; net: string }>(sql`
      select i.id, i.number, i.paid_minor,
        coalesce((select sum(p.amount_minor - p.refunded_minor) from payments p where p.invoice_id = i.id and p.status = 'succeeded'), 0) as net
      from invoices i where i.id in (${sql.join(
        ids.map((id) => sql`${id}::uuid`),
        sql`, `,
      )})`);
    for (const r of rec.rows)
      if (Number(r.net) !== Number(r.paid_minor))
        mismatches.push({
          invoiceId: r.id,
          label: invoiceLabel(r.number),
          paidMinor: Number(r.paid_minor),
          paymentsMinor: Number(r.net),
        });
  }
  const totals = byMethod.reduce(
    (a, m) => ({
      receivedMinor: a.receivedMinor + m.receivedMinor,
      refundedMinor: a.refundedMinor + m.refundedMinor,
      netMinor: a.netMinor + m.netMinor,
    }),
    { receivedMinor: 0, refundedMinor: 0, netMinor: 0 },
  );
  return {
    currency: practice.currency,
    timeZone: tz,
    from,
    to,
    entries,
    byMethod,
    totals,
    flagged,
    invoicesTouched: ids.length,
    mismatches,
  };
}
