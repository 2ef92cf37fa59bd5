/** Where a new invoice starts from: an appointment (its patient and its type's fee) or a patient. */
import { eq } from "drizzle-orm";
import { appointments, appointmentTypes, exams, patients } from "~/db/schema";
import { db } from "~/utils/db.server";
import { patientHitColumns } from "~/models/patients/patients.server";

/** The appointment with its type's fee and the exam linked to it, if any; null when there is none. */
export async function appointmentForInvoice(appointmentId: string) {
  const [appt] = await db
    .select({
      id: appointments.id,
      patientId: appointments.patientId,
      startsAt: appointments.startsAt,
      typeName: appointmentTypes.name,
      feeItemId: appointmentTypes.defaultFeeItemId,
    })
    .from(appointments)
    .innerJoin(appointmentTypes, eq(appointmentTypes.id, appointments.appointmentTypeId))
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
