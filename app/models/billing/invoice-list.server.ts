import { dateTimeFormat } from "~/lib/format/intl";
import { and, count, desc, eq, ilike, inArray, or, sql, type SQL } from "drizzle-orm";
import { invoices, patients, practiceSettings } from "~/db/schema";
import { formatDate, formatMoney } from "~/lib/format";
import { db } from "~/utils/db.server";
import { invoiceLabel, invoiceSummaryColumns } from "./invoices.server";

/** Which invoices the list shows: a status ("due" is open or part paid), a patient's name or an invoice number, a page. */
export type InvoiceListFilter = {
  status: (typeof invoices.$inferSelect)["status"] | "due" | "all";
  q: string;
  page: number;
};

/** One page of invoices, newest first, with the number that match; dates in the practice's time zone. */
export async function invoiceListPage(f: InvoiceListFilter, pageSize: number) {
  const where: SQL[] = [];
  if (f.status === "due") where.push(sql`${invoices.status} in ('open', 'partially_paid')`);
  else if (f.status !== "all") where.push(eq(invoices.status, f.status));
  if (f.q) {
    const n = /^(?:inv-?)?0*(\d{1,9})$/i.exec(f.q);
    const term = `%${f.q.replace(/[%_\\]/g, "\\$&")}%`;
    where.push(
      or(
        ilike(sql`${patients.firstName} || ' ' || ${patients.lastName}`, term),
        ...(n ? [eq(invoices.number, Number(n[1]))] : []),
      )!,
    );
  }
  const cond = where.length ? and(...where) : undefined;
  const cap = (f.page + 10) * pageSize + 1;
  const [rows, [{ total } = { total: 0 }], [settings]] = await Promise.all([
    db
      .select({
        ...invoiceSummaryColumns,
        patient: sql<string>`${patients.firstName} || ' ' || ${patients.lastName}`,
      })
      .from(invoices)
      .innerJoin(patients, eq(patients.id, invoices.patientId))
      .where(cond)
      .orderBy(desc(invoices.createdAt), desc(invoices.id))
      .limit(pageSize)
      .offset((f.page - 1) * pageSize),
    // Counted only up to ten pages past this one: an exact count of every invoice a practice ever
    // issued costs more than the page itself, and "more than 1,250" is all a pager needs.
    db.select({ total: count() }).from(
      db
        .select({ one: sql`1` })
        .from(invoices)
        .innerJoin(patients, eq(patients.id, invoices.patientId))
        .where(cond)
        .limit(cap)
        .as("capped"),
    ),
    db.select({ timeZone: practiceSettings.timeZone }).from(practiceSettings).where(eq(practiceSettings.id, 1)),
  ]);
  const tz = settings?.timeZone ?? "Europe/London";
  return {
    total: Math.min(total, cap - 1),
    totalIsExact: total < cap,
    rows: rows.map((r) => ({
      id: r.id,
      label: invoiceLabel(r.number),
      status: r.status,
      patient: r.patient,
      date: formatDate(r.issuedAt ?? r.createdAt, { timeZone: tz }),
      total: formatMoney(r.totalMinor, r.currency),
      due: formatMoney(r.totalMinor - r.paidMinor, r.currency),
    })),
  };
}

/** Which balances the list shows: a patient's name, the order (most owed or oldest debt first), a page. */
export type BalanceFilter = { q: string; sort: "owed" | "oldest"; page: number };

/**
 * Patients who owe money, a page at a time: the unpaid part of their open and part-paid invoices
 * (per currency), how many such invoices and the oldest; with the number of such patients and the
 * sum owed. Dates in the practice's time zone.
 */
export async function balancesPage(f: BalanceFilter, pageSize: number) {
  const owedMinor = sql<number>`sum(${invoices.totalMinor} - ${invoices.paidMinor})::int`;
  const oldest = sql<Date>`min(coalesce(${invoices.issuedAt}, ${invoices.createdAt}))`;
  const cond = and(
    inArray(invoices.status, ["open", "partially_paid"]),
    f.q
      ? ilike(sql`${patients.firstName} || ' ' || ${patients.lastName}`, `%${f.q.replace(/[%_\\]/g, "\\$&")}%`)
      : undefined,
  );
  const grouped = db
    .select({
      patientId: invoices.patientId,
      firstName: patients.firstName,
      lastName: patients.lastName,
      currency: invoices.currency,
      owedMinor: owedMinor.as("owed_minor"),
      invoiceCount: sql<number>`count(*)::int`.as("invoice_count"),
      oldest: oldest.as("oldest"),
    })
    .from(invoices)
    .innerJoin(patients, eq(patients.id, invoices.patientId))
    .where(cond)
    .groupBy(invoices.patientId, patients.firstName, patients.lastName, invoices.currency)
    .as("owed");
  const order =
    f.sort === "oldest"
      ? sql`${grouped.oldest} asc, ${grouped.patientId}`
      : sql`${grouped.owedMinor} desc, ${grouped.patientId}`;
  const [rows, [totals], [settings]] = await Promise.all([
    db
      .select()
      .from(grouped)
      .orderBy(order)
      .limit(pageSize)
      .offset((f.page - 1) * pageSize),
    db
      .select({
        patients: sql<number>`count(*)::int`,
        owedMinor: sql<number>`coalesce(sum(${grouped.owedMinor}), 0)::int`,
      })
      .from(grouped),
    db
      .select({ timeZone: practiceSettings.timeZone, currency: practiceSettings.currency })
      .from(practiceSettings)
      .where(eq(practiceSettings.id, 1)),
  ]);
  const fmt = dateTimeFormat("en-GB", {
    timeZone: settings?.timeZone ?? "Europe/London",
    day: "numeric",
    month: "short",
    year: "numeric",
  });
  return {
    total: totals?.patients ?? 0,
    totalOwed: formatMoney(totals?.owedMinor ?? 0, settings?.currency ?? "GBP"),
    rows: rows.map((r) => ({
      patientId: r.patientId,
      name: `${r.lastName}, ${r.firstName}`,
      owed: formatMoney(r.owedMinor, r.currency),
      invoices: r.invoiceCount,
      oldest: fmt.format(new Date(r.oldest)),
    })),
  };
}
