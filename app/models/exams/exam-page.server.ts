/**
 * What the exam page shows, and the exam's signing: the examiner's signature, countersignatures
 * by other clinicians and addenda to a signed exam. Each write runs in one transaction with its
 * audit row.
 */
import { asc, eq } from "drizzle-orm";
import { examAddenda, examCountersignatures, exams, patients, users } from "~/db/schema";
import { localDateTime, type EyeKey } from "~/lib/exam/sections";
import type { SphCyl } from "~/lib/optics";
import { ageInYears as ageOn } from "~/lib/format";
import { BILLING_ROLES } from "~/models/billing/invoices.server";
import { prescriptionsOf } from "~/models/prescriptions/prescriptions.server";
import { documentsOf } from "~/models/patients/documents.server";
import { audit } from "~/utils/audit.server";
import { db } from "~/utils/db.server";
import type { SessionUser } from "~/utils/session.server";
import { examFor, examSettings, formValues, loadExam, previousFinal, promptsFor, storedTriage } from "./exam.server";

type Exam = Awaited<ReturnType<typeof examFor>>;

/** Everything the exam page shows; reading it is audited. */
export async function examPageData(user: SessionUser, exam: Exam, request: Request) {
  const [patient] = await db
    .select({
      id: patients.id,
      firstName: patients.firstName,
      lastName: patients.lastName,
      dateOfBirth: patients.dateOfBirth,
      allergies: patients.allergies,
      medications: patients.medications,
    })
    .from(patients)
    .where(eq(patients.id, exam.patientId));
  const sections = await loadExam(exam.id);
  const [prev, prompts, optometrist, signer, prescriptions, documents, settings, countersignatures, triage] =
    await Promise.all([
      previousFinal(exam.patientId, exam.examinedAt),
      promptsFor(exam.patientId, exam, sections),
      db.select({ name: users.name }).from(users).where(eq(users.id, exam.optometristId)),
      exam.signedById
        ? db.select({ name: users.name }).from(users).where(eq(users.id, exam.signedById))
        : Promise.resolve([]),
      prescriptionsOf(exam.patientId, exam.id),
      documentsOf(exam.patientId, exam.id),
      examSettings(),
      db
        .select({
          clinicianId: examCountersignatures.clinicianId,
          clinician: users.name,
          note: examCountersignatures.note,
          signedAt: examCountersignatures.signedAt,
        })
        .from(examCountersignatures)
        .innerJoin(users, eq(users.id, examCountersignatures.clinicianId))
        .where(eq(examCountersignatures.examId, exam.id))
        .orderBy(asc(examCountersignatures.signedAt)),
      // Exams saved before triage was kept with them are triaged on reading.
      exam.triage ? Promise.resolve(exam.triage) : storedTriage(exam.id),
    ]);
  await audit({
    action: "exam.read",
    actorUserId: user.id,
    entityType: "exam",
    entityId: exam.id,
    patientId: exam.patientId,
    request,
  });
  return {
    patient: { ...patient!, age: ageOn(patient!.dateOfBirth) },
    exam: {
      id: exam.id,
      status: exam.status,
      examinedAt: exam.examinedAt.toISOString(),
      updatedAt: exam.updatedAt.toISOString(),
      signedAt: exam.signedAt?.toISOString() ?? null,
      optometrist: optometrist[0]?.name ?? "",
      signedBy: signer[0]?.name ?? null,
    },
    values: formValues(sections, settings.timeZone),
    diagnoses: sections.diagnoses.map((d) => `${d.code}|${d.eye}`),
    acuityNotation: settings.acuityNotation,
    nowLocal: localDateTime(new Date(), settings.timeZone),
    triage,
    countersignatures: countersignatures.map((c) => ({
      clinician: c.clinician,
      note: c.note,
      signedAt: c.signedAt.toISOString(),
    })),
    isExaminer: user.id === exam.optometristId,
    /** Billing is the owner's and the front desk's; of the clinical roles only the owner bills. */
    canBill: (BILLING_ROLES as readonly string[]).includes(user.role),
    canCountersign:
      exam.status === "signed" &&
      user.id !== exam.optometristId &&
      !countersignatures.some((c) => c.clinicianId === user.id),
    hasFinal: sections.refractions.some((r) => r.kind === "final"),
    addenda: sections.addenda.map((a) => ({ ...a, createdAt: a.createdAt.toISOString() })),
    previous: prev && {
      examinedAt: prev.examinedAt,
      rows: Object.fromEntries(
        prev.rows.map((r) => [
          r.eye,
          { sphere: r.sphere, cylinder: r.cylinder, axis: r.axis, addPower: r.addPower, va: r.vaNotation },
        ]),
      ) as Partial<Record<EyeKey, SphCyl & { addPower: number | null; va: string | null }>>,
    },
    prompts,
    prescriptions,
    documents,
    canSign: exam.status === "in_progress" && user.id === exam.optometristId,
  };
}

/** Signs an in-progress exam; false if it was signed meanwhile. */
export async function signExam(user: SessionUser, exam: Exam, request: Request) {
  return db.transaction(async (tx) => {
    const [locked] = await tx.select({ status: exams.status }).from(exams).where(eq(exams.id, exam.id)).for("update");
    if (locked?.status !== "in_progress") return false;
    await tx
      .update(exams)
      .set({ status: "signed", signedAt: new Date(), signedById: user.id, updatedAt: new Date() })
      .where(eq(exams.id, exam.id));
    await audit(
      {
        action: "exam.signed",
        actorUserId: user.id,
        entityType: "exam",
        entityId: exam.id,
        patientId: exam.patientId,
        request,
      },
      tx,
    );
    return true;
  });
}

/** Adds the user's countersignature; false if they have countersigned already. */
export async function countersignExam(user: SessionUser, exam: Exam, note: string, request: Request) {
  return db.transaction(async (tx) => {
    const rows = await tx
      .insert(examCountersignatures)
      .values({ examId: exam.id, clinicianId: user.id, note })
      .onConflictDoNothing()
      .returning({ examId: examCountersignatures.examId });
    if (!rows.length) return false;
    await audit(
      {
        action: "exam.countersigned",
        actorUserId: user.id,
        entityType: "exam",
        entityId: exam.id,
        patientId: exam.patientId,
        request,
      },
      tx,
    );
    return true;
  });
}

/** Adds an addendum to a signed exam. */
export async function addAddendum(
  user: SessionUser,
  exam: Exam,
  addendum: { section: string; body: string },
  request: Request,
) {
  await db.transaction(async (tx) => {
    const [row] = await tx
      .insert(examAddenda)
      .values({ examId: exam.id, authorId: user.id, ...addendum })
      .returning({ id: examAddenda.id });
    await audit(
      {
        action: "exam.addendum_added",
        actorUserId: user.id,
        entityType: "exam_addendum",
        entityId: row!.id,
        patientId: exam.patientId,
        detail: { examId: exam.id, section: addendum.section },
        request,
      },
      tx,
    );
  });
}
