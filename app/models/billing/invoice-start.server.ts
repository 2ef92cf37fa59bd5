/** Where a new invoice starts from: an appointment (its patient and its type's fee) or a patient. */
import { eq } from "drizzle-orm";
import { appointments, appointmentTypes, exams, patients, practiceSettings, sites } from "~/db/schema";
import { db } from "~/utils/db.server";
import { patientHitColumns } from "~/models/patients/patients.server";
import { siteOrPracticeZone } from "~/models/schedule/sites.server";

/** The appointment with its type's fee and the exam linked to it, if any; null when there is none. */
export async function appointmentForInvoice(appointmentId: string) {
  const [appt] = await db
    .select({
      id: appointments.id,
      patientId: appointments.patientId,
      startsAt: appointments.startsAt,
      typeName: appointmentTypes.name,
      feeItemId: appointmentTypes.defaultFeeItemId,
      timeZone: siteOrPracticeZone,
    })
    .from(appointments)
    .innerJoin(appointmentTypes, eq(appointmentTypes.id, appointments.appointmentTypeId))
    .leftJoin(sites, eq(sites.id, appointments.siteId))
    .where(eq(appointments.id, appointmentId));
  if (!appt) return null;
  const [linked] = await db.select({ id: exams.id }).from(exams).where(eq(exams.appointmentId, appt.id)).limit(1);
  return { ...appt, examId: linked?.id ?? null };
}

/** The patient an invoice is raised for, as the patient search shows one. */
export async function patientForInvoice(patientId: string) {
  const [p] = await db.select(patientHitColumns).from(patients).where(eq(patients.id, patientId));
  return p ?? null;
}

/** The practice's currency for a new invoice (pounds sterling until the practice has settings). */
export async function newInvoiceCurrency() {
  const [settings] = await db
    .select({ currency: practiceSettings.currency })
    .from(practiceSettings)
    .where(eq(practiceSettings.id, 1));
  return settings?.currency ?? "GBP";
}

/** The examined patient's id and full name, for the heading of an invoice raised from an exam; null when there is none. */
export async function examPatientForInvoice(patientId: string) {
  const [p] = await db
    .select({ id: patients.id, firstName: patients.firstName, lastName: patients.lastName })
    .from(patients)
    .where(eq(patients.id, patientId));
  return p ? { id: p.id, name: `${p.firstName} ${p.lastName}` } : null;
}
