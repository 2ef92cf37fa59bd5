/** Shared set-up for the billing tests: patients, a finished exam, fees and issued invoices. */
import { randomBytes } from "node:crypto";
import { eq } from "drizzle-orm";
import { appointments, appointmentTypes, exams, practiceSettings } from "~/db/schema";
import { createInvoice, issueInvoice } from "~/models/billing/invoices.server";
import { db } from "~/utils/db.server";
import { newFee, newPatient as makePatient } from "#tests/support/factories";
import { userByEmail } from "#tests/support/helpers";

export const STANDIN = () => `http://127.0.0.1:${process.env.STRIPE_API_PORT}`;

export const newPatient = (email?: string | null) =>
  makePatient({ firstName: "Wilhelmina", dateOfBirth: "1984-02-29", ...(email === undefined ? {} : { email }) });
export const fee = newFee;

export async function setTaxRate(bp: number) {
  await db.update(practiceSettings).set({ taxRateBp: bp }).where(eq(practiceSettings.id, 1));
}

let slot = 0;
/** A patient's exam on an appointment of a type whose default fee is `defaultFeeId`. */
export async function finishedExam(
  patientId: string,
  defaultFeeId: string,
  opts: { signed?: boolean; completed?: boolean } = {},
) {
  const optom = await userByEmail("optometrist@dioptra-demo.test");
  const [type] = await db
    .insert(appointmentTypes)
    .values({
      name: `Exam type ${randomBytes(3).toString("hex")}`,
      durationMinutes: 30,
      defaultFeeItemId: defaultFeeId,
    })
    .returning();
  // Far apart, random times so the no-double-booking constraint never bites between tests.
  const start = new Date(Date.UTC(2030, 0, 1) + (Math.floor(Math.random() * 1e6) * 97 + slot++ * 3) * 60_000);
  const [appt] = await db
    .insert(appointments)
    .values({
      patientId,
      providerId: optom.id,
      appointmentTypeId: type!.id,
      startsAt: start,
      endsAt: new Date(start.getTime() + 30 * 60_000),
      status: opts.completed === false ? "in_exam" : "completed",
    })
    .returning();
  const [exam] = await db
    .insert(exams)
    .values({
      patientId,
      optometristId: optom.id,
      appointmentId: appt!.id,
      status: opts.signed === false ? "in_progress" : "signed",
      ...(opts.signed === false ? {} : { signedAt: new Date(), signedById: optom.id }),
    })
    .returning();
  return exam!;
}

export async function issuedInvoice(
  lines: { priceMinor: number; quantity?: number; tax?: "standard" | "exempt" }[],
  patientEmail?: string | null,
) {
  const patient = await newPatient(patientEmail);
  const reception = await userByEmail("reception@dioptra-demo.test");
  const fees = await Promise.all(lines.map((l, i) => fee(`T${i}`, l.priceMinor, l.tax ?? "exempt")));
  const id = await createInvoice({
    patientId: patient.id,
    lines: fees.map((f, i) => ({ feeItemId: f.id, quantity: lines[i]!.quantity ?? 1 })),
    actorUserId: reception.id,
  });
  const { number } = await issueInvoice(id, reception.id);
  return { id, number, patient, reception };
}
