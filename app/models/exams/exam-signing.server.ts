/**
 * Signing an exam (and completing the appointment it was started from), countersignatures by
 * other clinicians, and addenda to a signed exam, one of which may give the final refraction the
 * exam lacks. Each write runs in one transaction with its audit row.
 */
import { and, eq } from "drizzle-orm";
import { examAddenda, examCountersignatures, examRefractions, exams } from "~/db/schema";
import { NO_FINAL_WARNING, titleOf } from "~/lib/exam/section-list";
import { EYES, parseRefractionEye, type FieldErrors } from "~/lib/exam/sections";
import { completeExamAppointment } from "~/models/schedule/schedule.server";
import { audit } from "~/utils/audit.server";
import { allOf, db, type Tx } from "~/utils/db.server";
import { DomainError } from "~/utils/failure.server";
import type { SessionUser } from "~/utils/session.server";
import { examSettings, SectionError, type examFor } from "./exam-records.server";
import { sectionStatesOf } from "./exam-save.server";

type Exam = Awaited<ReturnType<typeof examFor>>;

/** What the examiner confirms before signing: no final refraction, or sections whose last save was refused. */
export async function signWarnings(examId: string, conn: Tx | typeof db = db): Promise<string[]> {
  const [finals, states] = await allOf(conn, [
    conn
      .select({ eye: examRefractions.eye })
      .from(examRefractions)
      .where(and(eq(examRefractions.examId, examId), eq(examRefractions.kind, "final"))),
    () => sectionStatesOf(examId, conn),
  ]);
  const warnings = finals.length ? [] : [NO_FINAL_WARNING];
  const refused = Object.entries(states)
    .filter(([, s]) => s.refused)
    .map(([section]) => titleOf(section));
  if (refused.length)
    warnings.push(
      `Not saved (the last save was refused, so what was typed there is not part of the exam): ${refused.join(", ")}.`,
    );
  return warnings;
}

export type SignResult =
  | { ok: true; appointmentCompleted: boolean }
  | { ok: false; reason: "already signed" }
  | { ok: false; reason: "confirm"; warnings: string[] };

/**
 * Signs an in-progress exam. With anything to warn about it signs only when the examiner has
 * confirmed; the appointment the exam was started from is completed in the same transaction.
 */
export async function signExam(
  user: SessionUser,
  exam: Exam,
  request: Request,
  confirmed = false,
): Promise<SignResult> {
  return db.transaction(async (tx) => {
    const [locked] = await tx
      .select({ status: exams.status, appointmentId: exams.appointmentId })
      .from(exams)
      .where(eq(exams.id, exam.id))
      .for("update");
    if (locked?.status !== "in_progress") return { ok: false, reason: "already signed" } as const;
    const warnings = await signWarnings(exam.id, tx);
    if (warnings.length && !confirmed) return { ok: false, reason: "confirm", warnings } as const;
    const now = new Date();
    await tx
      .update(exams)
      .set({ status: "signed", signedAt: now, signedById: user.id, updatedAt: now })
      .where(eq(exams.id, exam.id));
    await audit(
      {
        action: "exam.signed",
        actorUserId: user.id,
        entityType: "exam",
        entityId: exam.id,
        patientId: exam.patientId,
        detail: warnings.length ? { confirmedWarnings: warnings } : undefined,
        request,
      },
      tx,
    );
    const appointmentCompleted = locked.appointmentId
      ? await completeExamAppointment(tx, user, locked.appointmentId, request, now)
      : false;
    return { ok: true, appointmentCompleted } as const;
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

/**
 * Adds an addendum to a signed exam. `finalRefraction` (the fields `right_rx`, `right_add`,
 * `right_va`, … as the refraction sections name them) gives the final refraction an exam signed
 * without one: its rows are kept with the addendum's id, so the record says who gave it and when.
 * An exam that has a final refraction is corrected in words.
 */
export async function addAddendum(
  user: SessionUser,
  exam: Exam,
  addendum: { section: string; body: string; finalRefraction?: Record<string, string | undefined> },
  request: Request,
) {
  const settings = await examSettings();
  const errors: FieldErrors = {};
  const eyes = EYES.flatMap((eye) => {
    if (!addendum.finalRefraction) return [];
    const r = parseRefractionEye(addendum.finalRefraction, eye, "Final refraction", settings.acuityNotation);
    if (!r.ok) Object.assign(errors, r.errors);
    return r.ok && r.value ? [{ eye, ...r.value }] : [];
  });
  if (Object.keys(errors).length) throw SectionError.inFields(errors);
  await db.transaction(async (tx) => {
    if (eyes.length) {
      const existing = await tx
        .select({ eye: examRefractions.eye })
        .from(examRefractions)
        .where(and(eq(examRefractions.examId, exam.id), eq(examRefractions.kind, "final")));
      if (existing.length)
        throw new DomainError(
          "This exam has a final refraction already; describe the correction in words (prescriptions issued from it stand as issued).",
          { status: 409 },
        );
    }
    const [row] = await tx
      .insert(examAddenda)
      .values({ examId: exam.id, authorId: user.id, section: addendum.section, body: addendum.body })
      .returning({ id: examAddenda.id });
    if (eyes.length)
      await tx.insert(examRefractions).values(
        eyes.map((r) => ({
          examId: exam.id,
          kind: "final" as const,
          eye: r.eye,
          rawText: r.rawText,
          sphere: r.rx.sphere,
          cylinder: r.rx.cylinder,
          axis: r.rx.axis,
          addPower: r.addPower,
          prismDioptres: r.prismDioptres,
          prismBase: r.prismBase,
          vertexMm: r.vertexMm,
          vaNotation: r.va?.notation ?? null,
          vaLogMar: r.va?.logMar ?? null,
          addendumId: row!.id,
        })),
      );
    await audit(
      {
        action: "exam.addendum_added",
        actorUserId: user.id,
        entityType: "exam_addendum",
        entityId: row!.id,
        patientId: exam.patientId,
        detail: { examId: exam.id, section: addendum.section, finalRefractionEyes: eyes.map((r) => r.eye) },
        request,
      },
      tx,
    );
  });
}
