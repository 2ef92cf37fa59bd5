/**
 * The exam record: finding an exam, reading its sections (as rows and as the page's form values),
 * the practice's exam settings, the previous final refraction, and starting an exam.
 */
import { and, asc, desc, eq, lt, sql } from "drizzle-orm";
import {
  examAcuity,
  examAddenda,
  examAssessment,
  examBinocular,
  examColourVision,
  examCornealThickness,
  examDiagnoses,
  examHistory,
  examIop,
  examRefractions,
  exams,
  examSegments,
  examVisualFields,
  patients,
  practiceSettings,
  users,
} from "~/db/schema";
import { acuityField, cctField, diagnosisField, iopField, type FieldErrors } from "~/lib/exam/sections";
import type { AcuityNotation } from "~/lib/optics";
import { findingsFormValues, loadFindings } from "~/models/exams/findings.server";
import { examTriageInput, proposalOf } from "~/models/exams/triage.server";
import { contactLensFormValues, loadContactLens } from "~/models/exams/contact-lens.server";
import { audit } from "~/utils/audit.server";
import type { SessionUser } from "~/utils/session.server";
import { allOf, db, type Tx } from "~/utils/db.server";
import { isUuid } from "~/models/patients/patient-schema";
import { DomainError, notFound } from "~/utils/failure.server";

const SECTION_NOT_SAVED = "Some fields need attention; nothing in this section was saved.";

/** A section's values refused field by field; nothing of the section is written. */
export class SectionError extends DomainError {
  constructor(message: string = SECTION_NOT_SAVED, options: ConstructorParameters<typeof DomainError>[1] = {}) {
    super(message, options);
  }

  static inFields(fieldErrors: FieldErrors) {
    return new SectionError(SECTION_NOT_SAVED, { fieldErrors });
  }
}

/** The exam row if it belongs to the patient (anything else: 404, so ids cannot be probed). */
export async function examFor(patientId: string | undefined, examId: string | undefined, tx: Tx | typeof db = db) {
  if (!isUuid(patientId) || !isUuid(examId)) notFound();
  const [exam] = await tx
    .select()
    .from(exams)
    .where(and(eq(exams.id, examId!), eq(exams.patientId, patientId!)))
    .limit(1);
  if (!exam) notFound();
  return exam;
}

async function finalRowsOf(examId: string, tx: Tx | typeof db = db) {
  return tx
    .select()
    .from(examRefractions)
    .where(and(eq(examRefractions.examId, examId), eq(examRefractions.kind, "final")));
}

/** The latest earlier exam of the patient that has a final refraction, with its rows. */
export async function previousFinal(patientId: string, before: Date) {
  const [prev] = await db
    .select({ id: exams.id, examinedAt: exams.examinedAt })
    .from(exams)
    .where(
      and(
        eq(exams.patientId, patientId),
        lt(exams.examinedAt, before),
        sql`exists (select 1 from ${examRefractions} r where r.exam_id = ${exams.id} and r.kind = 'final')`,
      ),
    )
    .orderBy(desc(exams.examinedAt))
    .limit(1);
  if (!prev) return null;
  const rows = await finalRowsOf(prev.id);
  return { examId: prev.id, examinedAt: prev.examinedAt.toISOString(), rows };
}

/** The practice's time zone and acuity notation (how bare numbers are read). */
export async function examSettings(
  conn: Tx | typeof db = db,
): Promise<{ timeZone: string; acuityNotation: AcuityNotation }> {
  const [s] = await conn
    .select({ timeZone: practiceSettings.timeZone, acuityNotation: practiceSettings.acuityNotation })
    .from(practiceSettings)
    .where(eq(practiceSettings.id, 1));
  return { timeZone: s?.timeZone ?? "Europe/London", acuityNotation: s?.acuityNotation ?? "metric" };
}

export async function loadExam(examId: string, conn: Tx | typeof db = db) {
  const [
    history,
    acuity,
    refractions,
    binocular,
    iop,
    cct,
    colour,
    fields,
    segments,
    assessment,
    diagnoses,
    addenda,
    findings,
    contactLens,
  ] = await allOf(conn, [
    conn.select().from(examHistory).where(eq(examHistory.examId, examId)),
    conn.select().from(examAcuity).where(eq(examAcuity.examId, examId)),
    conn.select().from(examRefractions).where(eq(examRefractions.examId, examId)),
    conn.select().from(examBinocular).where(eq(examBinocular.examId, examId)),
    conn.select().from(examIop).where(eq(examIop.examId, examId)).orderBy(asc(examIop.eye), asc(examIop.reading)),
    conn.select().from(examCornealThickness).where(eq(examCornealThickness.examId, examId)),
    conn.select().from(examColourVision).where(eq(examColourVision.examId, examId)),
    conn.select().from(examVisualFields).where(eq(examVisualFields.examId, examId)),
    conn.select().from(examSegments).where(eq(examSegments.examId, examId)),
    conn.select().from(examAssessment).where(eq(examAssessment.examId, examId)),
    conn.select().from(examDiagnoses).where(eq(examDiagnoses.examId, examId)).orderBy(asc(examDiagnoses.code)),
    conn
      .select({
        id: examAddenda.id,
        section: examAddenda.section,
        body: examAddenda.body,
        createdAt: examAddenda.createdAt,
        author: users.name,
      })
      .from(examAddenda)
      .innerJoin(users, eq(users.id, examAddenda.authorId))
      .where(eq(examAddenda.examId, examId))
      .orderBy(asc(examAddenda.createdAt)),
    () => loadFindings(examId, conn),
    () => loadContactLens(examId, conn),
  ]);
  return {
    history: history[0] ?? null,
    acuity,
    refractions,
    binocular: binocular[0] ?? null,
    iop,
    cct,
    colour,
    fields,
    segments,
    assessment: assessment[0] ?? null,
    diagnoses,
    addenda,
    findings,
    contactLens,
  };
}
export type ExamSections = Awaited<ReturnType<typeof loadExam>>;

/** Section values as the form fields of the exam page expect them (text as typed). */
export function formValues(s: ExamSections, timeZone: string): Record<string, string> {
  const v: Record<string, string> = {
    ...findingsFormValues(s.findings, timeZone),
    ...contactLensFormValues(s.contactLens),
  };
  const put = (k: string, x: unknown) => {
    if (x !== null && x !== undefined && x !== "") v[k] = String(x);
  };
  if (s.history)
    for (const k of ["reason", "symptoms", "ocularHistory", "generalHistory", "medications", "familyHistory"] as const)
      put(k, s.history[k]);
  for (const a of s.acuity) put(acuityField(a.eye, a.distance, a.correction), a.notation);
  for (const r of s.refractions) {
    const p = `${r.kind}.${r.eye}_`;
    put(`${p}rx`, r.rawText);
    put(`${p}add`, r.addPower?.toFixed(2));
    put(`${p}prism`, r.prismDioptres);
    put(`${p}base`, r.prismBase);
    put(`${p}vertex`, r.vertexMm);
    put(`${p}va`, r.vaNotation);
  }
  if (s.binocular)
    for (const k of ["coverTestDistance", "coverTestNear", "npcCm", "stereoTest", "stereoArcSec", "notes"] as const)
      put(`bv_${k}`, s.binocular[k]);
  for (const r of s.iop) {
    put(iopField(r.eye, "mmHg", r.reading), r.mmHg);
    put(iopField(r.eye, "method", r.reading), r.method);
    put(iopField(r.eye, "time", r.reading), r.measuredTime.slice(0, 5));
  }
  for (const r of s.cct) put(cctField(r.eye), r.micrometres);
  for (const d of s.diagnoses) v[diagnosisField(d.code)] = d.eye;
  for (const r of s.colour) {
    put(`${r.eye}_test`, r.test);
    put(`${r.eye}_correct`, r.platesCorrect);
    put(`${r.eye}_shown`, r.platesShown);
    put(`${r.eye}_result`, r.result);
    put(`${r.eye}_cvnotes`, r.notes);
  }
  for (const r of s.fields) {
    put(`${r.eye}_fmethod`, r.method);
    put(`${r.eye}_bsX`, r.blindSpotXDeg);
    put(`${r.eye}_bsY`, r.blindSpotYDeg);
    put(`${r.eye}_bsW`, r.blindSpotWidthDeg);
    put(`${r.eye}_bsH`, r.blindSpotHeightDeg);
    if (r.defectPresent) v[`${r.eye}_defect`] = "on";
    put(`${r.eye}_defects`, r.defects);
    put(`${r.eye}_reliability`, r.reliability);
  }
  for (const r of s.segments) {
    v[`${r.eye}_${r.segment}_normal`] = r.normal.join(",");
    put(`${r.eye}_${r.segment}_notes`, r.notes);
  }
  if (s.assessment) {
    put("assessment", s.assessment.assessment);
    put("plan", s.assessment.plan);
    put("recallMonths", s.assessment.recallMonths);
  }
  return v;
}

/** The triage proposal to keep with the exam; a finding the engine refuses leaves it unset. */
export async function storedTriage(examId: string, conn: Tx | typeof db = db) {
  return proposalOf(await examTriageInput(examId, conn));
}

export async function startExam(user: SessionUser, patientId: string, request: Request) {
  return db.transaction(async (tx) => {
    const [exam] = await tx
      .insert(exams)
      .values({ patientId, optometristId: user.id })
      .returning({ id: exams.id, examinedAt: exams.examinedAt });
    await tx
      .update(patients)
      .set({ lastExamAt: sql`greatest(${patients.lastExamAt}, ${exam!.examinedAt.toISOString()}::timestamptz)` })
      .where(eq(patients.id, patientId));
    await audit(
      { action: "exam.created", actorUserId: user.id, entityType: "exam", entityId: exam!.id, patientId, request },
      tx,
    );
    return exam!.id;
  });
}
