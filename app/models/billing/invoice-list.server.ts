import { and, count, desc, eq, ilike, or, sql, type SQL } from "drizzle-orm";
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
