import { and, asc, desc, eq, inArray, sql } from "drizzle-orm";
import { appointments, appointmentTypes, examAssessment, examRefractions, exams, invoices, users } from "~/db/schema";
import { invoiceLabel, invoiceSummaryColumns } from "~/models/billing/invoices.server";
import { myopiaProgressionReport, toPowerVector, type MyopiaProgressionReport } from "~/lib/optics";
import { db } from "~/utils/db.server";
import { ageInYears as ageOn } from "~/lib/format";
import { DEFAULT_RECALL_MONTHS } from "./patients.server";

export async function appointmentsOf(patientId: string) {
  const rows = await db
    .select({
      id: appointments.id,
      startsAt: appointments.startsAt,
      status: appointments.status,
      type: appointmentTypes.name,
      provider: users.name,
    })
    .from(appointments)
    .innerJoin(appointmentTypes, eq(appointmentTypes.id, appointments.appointmentTypeId))
    .innerJoin(users, eq(users.id, appointments.providerId))
    .where(eq(appointments.patientId, patientId))
    .orderBy(desc(appointments.startsAt))
    .limit(20);
  return rows.map((r) => ({ ...r, startsAt: r.startsAt.toISOString() }));
}

export async function invoicesOf(patientId: string) {
  const rows = await db
    .select(invoiceSummaryColumns)
    .from(invoices)
    .where(eq(invoices.patientId, patientId))
    .orderBy(desc(invoices.createdAt))
    .limit(30);
  return rows.map((r) => ({
    ...r,
    label: invoiceLabel(r.number),
    at: (r.issuedAt ?? r.createdAt).toISOString(),
    issuedAt: undefined,
    createdAt: undefined,
  }));
}

/** What the patient owes: the unpaid part of every issued invoice that is open or part paid, per currency. */
export async function balanceOf(patientId: string) {
  const rows = await db
    .select({
      currency: invoices.currency,
      owedMinor: sql<number>`sum(${invoices.totalMinor} - ${invoices.paidMinor})::int`,
      invoices: sql<number>`count(*)::int`,
    })
    .from(invoices)
    .where(and(eq(invoices.patientId, patientId), inArray(invoices.status, ["open", "partially_paid"])))
    .groupBy(invoices.currency);
  return rows;
}

export async function examsOf(patientId: string) {
  const rows = await db
    .select({
      id: exams.id,
      examinedAt: exams.examinedAt,
      status: exams.status,
      optometrist: users.name,
      recallMonths: examAssessment.recallMonths,
    })
    .from(exams)
    .innerJoin(users, eq(users.id, exams.optometristId))
    .leftJoin(examAssessment, eq(examAssessment.examId, exams.id))
    .where(eq(exams.patientId, patientId))
    .orderBy(desc(exams.examinedAt))
    .limit(100);
  return rows.map((r) => ({ ...r, examinedAt: r.examinedAt.toISOString() }));
}

export type RefractionPoint = {
  examId: string;
  date: string;
  kind: string;
  eye: "right" | "left";
  sphere: number;
  cylinder: number;
  axis: number;
  M: number;
  J0: number;
  J45: number;
};

/** Every refraction row of the patient with its power vector (Thibos et al. 1997), oldest first. */
export async function refractionHistory(patientId: string): Promise<RefractionPoint[]> {
  const rows = await db
    .select({
      examId: examRefractions.examId,
      at: exams.examinedAt,
      kind: examRefractions.kind,
      eye: examRefractions.eye,
      sphere: examRefractions.sphere,
      cylinder: examRefractions.cylinder,
      axis: examRefractions.axis,
    })
    .from(examRefractions)
    .innerJoin(exams, eq(exams.id, examRefractions.examId))
    .where(eq(exams.patientId, patientId))
    .orderBy(asc(exams.examinedAt))
    .limit(2000);
  const round = (x: number) => Math.round(x * 1000) / 1000;
  return rows.map(({ at, ...r }) => {
    const pv = toPowerVector(r);
    return { ...r, date: at.toISOString(), M: round(pv.M), J0: round(pv.J0), J45: round(pv.J45) };
  });
}

/**
 * For a child (under 18 at the last exam): myopia progression per eye from the final refractions,
 * over the most recent interval and on average; only eyes that are myopic at the last exam.
 */
export function childProgression(dateOfBirth: string, points: RefractionPoint[]) {
  const finals = points.filter((p) => p.kind === "final");
  if (!finals.length) return null;
  const lastDate = finals[finals.length - 1]!.date.slice(0, 10);
  if (ageOn(dateOfBirth, lastDate) >= 18) return null;
  const out: Partial<Record<"right" | "left", MyopiaProgressionReport>> = {};
  for (const eye of ["right", "left"] as const) {
    try {
      const report = myopiaProgressionReport(finals.filter((p) => p.eye === eye).map((p) => ({ date: p.date, rx: p })));
      if (report) out[eye] = report;
    } catch {
      /* an unreadable date: no rate */
    }
  }
  return Object.keys(out).length ? out : null;
}

/** Recall: due when the last exam is older than its recorded recall interval (else the default). */
export function recallDue(examList: { examinedAt: string; recallMonths: number | null }[], now = new Date()) {
  const last = examList[0];
  if (!last) return { due: true, months: DEFAULT_RECALL_MONTHS, since: null as string | null };
  const months = last.recallMonths ?? DEFAULT_RECALL_MONTHS;
  const dueAt = new Date(last.examinedAt);
  dueAt.setUTCMonth(dueAt.getUTCMonth() + months);
  return { due: dueAt <= now, months, since: last.examinedAt, dueAt: dueAt.toISOString() };
}
