import { and, asc, desc, eq, inArray, lt, sql } from "drizzle-orm";
import { data } from "react-router";
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
import {
  ACUITY_CORRECTIONS,
  ACUITY_DISTANCES,
  ACUITY_EYES,
  acuityField,
  COLOUR_RESULTS,
  cctField,
  COLOUR_TESTS,
  diagnosisField,
  EYES,
  FIELD_METHODS,
  iopField,
  parseAcuity,
  parseDiagnoses,
  parseIop,
  parseNumber,
  parseRefractionEye,
  REFRACTION_LABEL,
  RELIABILITY,
  SEGMENT_STRUCTURES,
  type FieldErrors,
  type RefractionKind,
  type SegmentKey,
} from "~/lib/exam/sections";
import { referralPrompts, type AcuityNotation, type ReferralFindings, type ReferralPrompt } from "~/lib/optics";
import { TriageInputError } from "~/lib/referrals";
import {
  FINDINGS_SECTIONS,
  FindingsError,
  findingsFormValues,
  loadFindings,
  saveFindings,
  type FindingsSection,
} from "~/models/exams/findings.server";
import { examTriage, iopForTriage } from "~/models/exams/triage.server";
import { audit } from "~/utils/audit.server";
import type { SessionUser } from "~/utils/session.server";
import { db, type Tx } from "~/utils/db.server";
import { isUuid } from "~/models/patients/patient-schema";
import { DomainError, notFound } from "~/utils/failure.server";
import type { ExamSectionId } from "~/lib/exam/section-list";

type Form = Record<string, string | undefined>;

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

export async function loadExam(examId: string) {
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
  ] = await Promise.all([
    db.select().from(examHistory).where(eq(examHistory.examId, examId)),
    db.select().from(examAcuity).where(eq(examAcuity.examId, examId)),
    db.select().from(examRefractions).where(eq(examRefractions.examId, examId)),
    db.select().from(examBinocular).where(eq(examBinocular.examId, examId)),
    db.select().from(examIop).where(eq(examIop.examId, examId)).orderBy(asc(examIop.eye), asc(examIop.reading)),
    db.select().from(examCornealThickness).where(eq(examCornealThickness.examId, examId)),
    db.select().from(examColourVision).where(eq(examColourVision.examId, examId)),
    db.select().from(examVisualFields).where(eq(examVisualFields.examId, examId)),
    db.select().from(examSegments).where(eq(examSegments.examId, examId)),
    db.select().from(examAssessment).where(eq(examAssessment.examId, examId)),
    db.select().from(examDiagnoses).where(eq(examDiagnoses.examId, examId)).orderBy(asc(examDiagnoses.code)),
    db
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
    loadFindings(examId),
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
  };
}
export type ExamSections = Awaited<ReturnType<typeof loadExam>>;

/** Section values as the form fields of the exam page expect them (text as typed). */
export function formValues(s: ExamSections, timeZone: string): Record<string, string> {
  const v: Record<string, string> = findingsFormValues(s.findings, timeZone);
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

type PromptSections = Pick<ExamSections, "iop" | "fields" | "colour" | "acuity">;
type PreviousForPrompts = {
  colour: { eye: string; result: string }[];
  acuity: { eye: string; distance: string; correction: string; logMar: number }[];
};

/** Referral prompts of the engine from one exam's findings and the previous visit's. */
export function promptsFrom(s: PromptSections, prev: PreviousForPrompts): ReferralPrompt[] {
  const findings: ReferralFindings = {};
  // Every reading of the eye's preferred method (applanation first), so the engine uses their mean and knows the method.
  if (s.iop.length)
    findings.iop = Object.fromEntries(
      EYES.flatMap((eye) => {
        const r = iopForTriage(s.iop.filter((x) => x.eye === eye));
        return r ? [[eye, { readings: r.iopMmHg, method: r.iopMethod }]] : [];
      }),
    );
  const spots = s.fields.filter(
    (r) =>
      r.blindSpotXDeg !== null &&
      r.blindSpotYDeg !== null &&
      r.blindSpotWidthDeg !== null &&
      r.blindSpotHeightDeg !== null,
  );
  if (spots.length)
    findings.blindSpot = Object.fromEntries(
      spots.map((r) => [
        r.eye,
        {
          centreXDeg: r.blindSpotXDeg!,
          centreYDeg: r.blindSpotYDeg!,
          widthDeg: r.blindSpotWidthDeg!,
          heightDeg: r.blindSpotHeightDeg!,
        },
      ]),
    );
  if (s.fields.length)
    findings.fieldDefect = Object.fromEntries(
      s.fields.map((r) => [r.eye, { present: r.defectPresent, description: r.defects }]),
    );
  const cvResult = (r: string) =>
    (r === "normal" ? "normal" : r === "inconclusive" ? "inconclusive" : "deficiency suspected") as
      "normal" | "inconclusive" | "deficiency suspected";
  if (s.colour.length)
    findings.colourVision = Object.fromEntries(
      s.colour.map((r) => {
        const before = prev.colour.find((p) => p.eye === r.eye);
        const kind =
          r.result === "blue_yellow"
            ? ("blue-yellow" as const)
            : r.result === "red_green"
              ? ("red-green" as const)
              : undefined;
        return [
          r.eye,
          {
            result: cvResult(r.result),
            changedFromPrevious: before ? cvResult(before.result) !== cvResult(r.result) : undefined,
            kind,
            blueYellowBefore: before?.result === "blue_yellow",
          },
        ];
      }),
    );
  const isBest = (a: { distance: string; correction: string; eye: string }) =>
    a.distance === "distance" && a.correction === "best" && a.eye !== "both";
  const best = s.acuity.filter(isBest);
  if (best.length)
    findings.acuity = Object.fromEntries(
      best.map((a) => [
        a.eye,
        { bestCorrected: a.logMar, previous: prev.acuity.filter(isBest).find((p) => p.eye === a.eye)?.logMar },
      ]),
    );
  try {
    return referralPrompts(findings);
  } catch {
    return [];
  }
}

/** Prompts for the exam page: this exam's saved findings against the previous exam's. */
export async function promptsFor(
  patientId: string,
  exam: { id: string; examinedAt: Date },
  s: ExamSections,
): Promise<ReferralPrompt[]> {
  const [prevExam] = await db
    .select({ id: exams.id })
    .from(exams)
    .where(and(eq(exams.patientId, patientId), lt(exams.examinedAt, exam.examinedAt)))
    .orderBy(desc(exams.examinedAt))
    .limit(1);
  const [colour, acuity] = prevExam
    ? await Promise.all([
        db.select().from(examColourVision).where(eq(examColourVision.examId, prevExam.id)),
        db.select().from(examAcuity).where(eq(examAcuity.examId, prevExam.id)),
      ])
    : [[], []];
  return promptsFrom(s, { colour, acuity });
}

/** Prompts for the chart: the latest exam's findings against the one before, in two round trips. */
export async function latestPrompts(patientId: string): Promise<ReferralPrompt[]> {
  const latest = await db
    .select({ id: exams.id })
    .from(exams)
    .where(eq(exams.patientId, patientId))
    .orderBy(desc(exams.examinedAt))
    .limit(2);
  if (!latest.length) return [];
  const ids = latest.map((e) => e.id);
  const [iop, fields, colour, acuity] = await Promise.all([
    db.select().from(examIop).where(inArray(examIop.examId, ids)),
    db.select().from(examVisualFields).where(inArray(examVisualFields.examId, ids)),
    db.select().from(examColourVision).where(inArray(examColourVision.examId, ids)),
    db.select().from(examAcuity).where(inArray(examAcuity.examId, ids)),
  ]);
  const of = <T extends { examId: string }>(rows: T[], id: string | undefined) => rows.filter((r) => r.examId === id);
  const [now, before] = ids;
  return promptsFrom(
    { iop: of(iop, now), fields: of(fields, now), colour: of(colour, now), acuity: of(acuity, now) },
    { colour: of(colour, before), acuity: of(acuity, before) },
  );
}

// ------------------------------------------------------------------------------- saving

const text = (form: Form, k: string, max = 4000) => (form[k] ?? "").trim().slice(0, max);

function oneOf<T extends string>(
  value: string | undefined,
  options: Record<T, string> | readonly T[],
  label: string,
  errors: FieldErrors,
  field: string,
): T | null {
  const v = (value ?? "").trim();
  if (!v) return null;
  const keys = Array.isArray(options) ? options : Object.keys(options);
  if (!keys.includes(v)) {
    errors[field] = [`${label}: choose one of the listed options.`];
    return null;
  }
  return v as T;
}

async function saveHistory(tx: Tx, examId: string, form: Form) {
  const values = {
    reason: text(form, "reason"),
    symptoms: text(form, "symptoms"),
    ocularHistory: text(form, "ocularHistory"),
    generalHistory: text(form, "generalHistory"),
    medications: text(form, "medications"),
    familyHistory: text(form, "familyHistory"),
  };
  await tx
    .insert(examHistory)
    .values({ examId, ...values })
    .onConflictDoUpdate({ target: examHistory.examId, set: { ...values, updatedAt: new Date() } });
}

async function saveAcuity(tx: Tx, examId: string, form: Form, practiceNotation: AcuityNotation) {
  const chosen = (form.va_notation ?? "").trim();
  const notation = (["metric", "feet", "decimal", "logmar"] as const).find((n) => n === chosen) ?? practiceNotation;
  const errors: FieldErrors = {};
  const rows: (typeof examAcuity.$inferInsert)[] = [];
  for (const eye of ACUITY_EYES)
    for (const distance of ACUITY_DISTANCES)
      for (const correction of ACUITY_CORRECTIONS) {
        const k = acuityField(eye, distance, correction);
        const label = `${eye === "both" ? "Both eyes" : eye === "right" ? "Right" : "Left"} ${distance} ${correction} VA`;
        const r = parseAcuity(form[k], label, { notation, distance });
        if (r.error) errors[k] = [r.error];
        else if (r.value && r.value.pinhole && correction !== "pinhole")
          errors[k] = [`${label}: a pinhole value belongs in the pinhole column.`];
        else if (r.value)
          rows.push({
            examId,
            eye,
            distance,
            correction,
            notation: r.value.notation,
            scale: r.value.scale,
            logMar: r.value.logMar,
          });
      }
  if (Object.keys(errors).length) throw SectionError.inFields(errors);
  await tx.delete(examAcuity).where(eq(examAcuity.examId, examId));
  if (rows.length) await tx.insert(examAcuity).values(rows);
}

async function saveRefraction(tx: Tx, examId: string, kind: RefractionKind, form: Form, notation: AcuityNotation) {
  const errors: FieldErrors = {};
  const rows: (typeof examRefractions.$inferInsert)[] = [];
  for (const eye of EYES) {
    const r = parseRefractionEye(form, eye, REFRACTION_LABEL[kind], notation);
    if (!r.ok) Object.assign(errors, r.errors);
    else if (r.value)
      rows.push({
        examId,
        kind,
        eye,
        rawText: r.value.rawText,
        sphere: r.value.rx.sphere,
        cylinder: r.value.rx.cylinder,
        axis: r.value.rx.axis,
        addPower: r.value.addPower,
        prismDioptres: r.value.prismDioptres,
        prismBase: r.value.prismBase,
        vertexMm: r.value.vertexMm,
        vaNotation: r.value.va?.notation ?? null,
        vaLogMar: r.value.va?.logMar ?? null,
      });
  }
  if (Object.keys(errors).length) throw SectionError.inFields(errors);
  await tx.delete(examRefractions).where(and(eq(examRefractions.examId, examId), eq(examRefractions.kind, kind)));
  if (rows.length) await tx.insert(examRefractions).values(rows);
}

async function saveBinocular(tx: Tx, examId: string, form: Form) {
  const errors: FieldErrors = {};
  const npc = parseNumber(form.bv_npcCm, "Near point of convergence (cm)", 0, 100);
  if (npc.error) errors.bv_npcCm = [npc.error];
  const stereo = parseNumber(form.bv_stereoArcSec, "Stereo acuity (seconds of arc)", 1, 10000, { integer: true });
  if (stereo.error) errors.bv_stereoArcSec = [stereo.error];
  if (Object.keys(errors).length) throw SectionError.inFields(errors);
  const values = {
    coverTestDistance: text(form, "bv_coverTestDistance", 500),
    coverTestNear: text(form, "bv_coverTestNear", 500),
    npcCm: npc.value,
    stereoTest: text(form, "bv_stereoTest", 200),
    stereoArcSec: stereo.value,
    notes: text(form, "bv_notes"),
  };
  await tx
    .insert(examBinocular)
    .values({ examId, ...values })
    .onConflictDoUpdate({ target: examBinocular.examId, set: { ...values, updatedAt: new Date() } });
}

async function saveIop(tx: Tx, examId: string, form: Form) {
  const parsed = parseIop(form);
  if (!parsed.ok) throw SectionError.inFields(parsed.errors);
  const { readings, cct } = parsed.value;
  const rows = EYES.flatMap((eye) =>
    (readings[eye] ?? []).map((r, i) => ({
      examId,
      eye,
      reading: i + 1,
      mmHg: r.mmHg,
      method: r.method,
      measuredTime: r.time,
    })),
  );
  await tx.delete(examIop).where(eq(examIop.examId, examId));
  if (rows.length) await tx.insert(examIop).values(rows);
  await tx.delete(examCornealThickness).where(eq(examCornealThickness.examId, examId));
  const cctRows = EYES.flatMap((eye) => (cct[eye] !== undefined ? [{ examId, eye, micrometres: cct[eye]! }] : []));
  if (cctRows.length) await tx.insert(examCornealThickness).values(cctRows);
}

async function saveColour(tx: Tx, examId: string, form: Form) {
  const errors: FieldErrors = {};
  const rows: (typeof examColourVision.$inferInsert)[] = [];
  for (const eye of EYES) {
    const E = eye === "right" ? "Right" : "Left";
    const test = oneOf(form[`${eye}_test`], COLOUR_TESTS, `${E} colour test`, errors, `${eye}_test`);
    const result = oneOf(form[`${eye}_result`], COLOUR_RESULTS, `${E} colour result`, errors, `${eye}_result`);
    const correct = parseNumber(form[`${eye}_correct`], `${E} plates read`, 0, 100, { integer: true });
    const shown = parseNumber(form[`${eye}_shown`], `${E} plates shown`, 1, 100, { integer: true });
    if (correct.error) errors[`${eye}_correct`] = [correct.error];
    if (shown.error) errors[`${eye}_shown`] = [shown.error];
    if (correct.value !== null && shown.value !== null && correct.value > shown.value)
      errors[`${eye}_correct`] = [`${E}: plates read (${correct.value}) cannot exceed plates shown (${shown.value}).`];
    if (correct.value !== null && shown.value === null && !shown.error)
      errors[`${eye}_shown`] = [`${E}: give the number of plates shown.`];
    const notes = text(form, `${eye}_cvnotes`, 1000);
    const any = test || result || correct.value !== null || shown.value !== null || notes;
    if (!any) continue;
    if (!test && !errors[`${eye}_test`]) errors[`${eye}_test`] = [`${E} colour vision: choose the test used.`];
    if (!result && !errors[`${eye}_result`]) errors[`${eye}_result`] = [`${E} colour vision: choose the result.`];
    if (test && result)
      rows.push({ examId, eye, test, result, platesCorrect: correct.value, platesShown: shown.value, notes });
  }
  if (Object.keys(errors).length) throw SectionError.inFields(errors);
  await tx.delete(examColourVision).where(eq(examColourVision.examId, examId));
  if (rows.length) await tx.insert(examColourVision).values(rows);
}

async function saveFields(tx: Tx, examId: string, form: Form) {
  const errors: FieldErrors = {};
  const rows: (typeof examVisualFields.$inferInsert)[] = [];
  for (const eye of EYES) {
    const E = eye === "right" ? "Right" : "Left";
    const method = oneOf(form[`${eye}_fmethod`], FIELD_METHODS, `${E} field method`, errors, `${eye}_fmethod`);
    const reliability = oneOf(
      form[`${eye}_reliability`],
      RELIABILITY,
      `${E} reliability`,
      errors,
      `${eye}_reliability`,
    );
    const nums = {
      bsX: parseNumber(form[`${eye}_bsX`], `${E} blind-spot centre, horizontal (°)`, -40, 40),
      bsY: parseNumber(form[`${eye}_bsY`], `${E} blind-spot centre, vertical (°)`, -30, 30),
      bsW: parseNumber(form[`${eye}_bsW`], `${E} blind-spot width (°)`, 0.1, 40),
      bsH: parseNumber(form[`${eye}_bsH`], `${E} blind-spot height (°)`, 0.1, 40),
    };
    for (const [k, r] of Object.entries(nums)) if (r.error) errors[`${eye}_${k}`] = [r.error];
    const given = Object.entries(nums).filter(([, r]) => r.value !== null);
    if (given.length > 0 && given.length < 4) {
      for (const [k, r] of Object.entries(nums))
        if (r.value === null && !r.error)
          errors[`${eye}_${k}`] = [
            `${E} blind spot: give centre (horizontal and vertical), width and height together.`,
          ];
    }
    const defect = form[`${eye}_defect`] === "on";
    const defects = text(form, `${eye}_defects`, 2000);
    const any = method || reliability || given.length || defect || defects;
    if (!any) continue;
    if (!method && !errors[`${eye}_fmethod`]) errors[`${eye}_fmethod`] = [`${E} field: choose the method.`];
    if (method)
      rows.push({
        examId,
        eye,
        method,
        reliability,
        blindSpotXDeg: nums.bsX.value,
        blindSpotYDeg: nums.bsY.value,
        blindSpotWidthDeg: nums.bsW.value,
        blindSpotHeightDeg: nums.bsH.value,
        defectPresent: defect,
        defects,
      });
  }
  if (Object.keys(errors).length) throw SectionError.inFields(errors);
  await tx.delete(examVisualFields).where(eq(examVisualFields.examId, examId));
  if (rows.length) await tx.insert(examVisualFields).values(rows);
}

async function saveSegments(tx: Tx, examId: string, form: Form, all: FormData) {
  const rows: (typeof examSegments.$inferInsert)[] = [];
  for (const eye of EYES)
    for (const segment of Object.keys(SEGMENT_STRUCTURES) as SegmentKey[]) {
      const allowed = Object.keys(SEGMENT_STRUCTURES[segment]);
      const normal = all
        .getAll(`${eye}_${segment}_normal`)
        .map(String)
        .filter((k) => allowed.includes(k));
      const notes = text(form, `${eye}_${segment}_notes`);
      if (normal.length || notes) rows.push({ examId, eye, segment, normal, notes });
    }
  await tx.delete(examSegments).where(eq(examSegments.examId, examId));
  if (rows.length) await tx.insert(examSegments).values(rows);
}

async function saveAssessment(tx: Tx, examId: string, form: Form) {
  const errors: FieldErrors = {};
  const recall = parseNumber(form.recallMonths, "Recall (months)", 1, 60, { integer: true });
  if (recall.error) errors.recallMonths = [recall.error];
  const dx = parseDiagnoses(form);
  if (!dx.ok) Object.assign(errors, dx.errors);
  const diagnoses = dx.ok ? dx.value.map((d) => ({ examId, ...d })) : [];
  if (Object.keys(errors).length) throw SectionError.inFields(errors);
  const values = {
    assessment: text(form, "assessment", 8000),
    plan: text(form, "plan", 8000),
    recallMonths: recall.value,
  };
  await tx
    .insert(examAssessment)
    .values({ examId, ...values })
    .onConflictDoUpdate({ target: examAssessment.examId, set: { ...values, updatedAt: new Date() } });
  await tx.delete(examDiagnoses).where(eq(examDiagnoses.examId, examId));
  if (diagnoses.length) await tx.insert(examDiagnoses).values(diagnoses);
}

export type Section = ExamSectionId;

/** Saves one section of an in-progress exam in one transaction; a signed exam answers 409. */
export async function saveSection(
  user: SessionUser,
  patientId: string,
  examId: string,
  section: Section,
  all: FormData,
  request: Request,
) {
  const form: Form = {};
  for (const [k, v] of all.entries()) if (typeof v === "string" && form[k] === undefined) form[k] = v;
  return db.transaction(async (tx) => {
    const [locked] = await tx
      .select({ status: exams.status, examinedAt: exams.examinedAt })
      .from(exams)
      .where(eq(exams.id, examId))
      .for("update");
    if (locked?.status !== "in_progress")
      throw data(
        { ok: false, section, message: "This exam is signed and read-only. Add an addendum instead." },
        { status: 409 },
      );
    const settings = await examSettings(tx);
    if (section === "history") await saveHistory(tx, examId, form);
    else if (section === "acuity") await saveAcuity(tx, examId, form, settings.acuityNotation);
    else if (section.startsWith("refraction:"))
      await saveRefraction(
        tx,
        examId,
        section.slice("refraction:".length) as RefractionKind,
        form,
        settings.acuityNotation,
      );
    else if ((FINDINGS_SECTIONS as readonly string[]).includes(section)) {
      try {
        await saveFindings(tx, examId, section as FindingsSection, form, {
          now: new Date(),
          examinedAt: locked.examinedAt,
          timeZone: settings.timeZone,
        });
      } catch (e) {
        if (e instanceof FindingsError) throw SectionError.inFields(e.fieldErrors);
        throw e;
      }
    } else if (section === "binocular") await saveBinocular(tx, examId, form);
    else if (section === "iop") await saveIop(tx, examId, form);
    else if (section === "colour") await saveColour(tx, examId, form);
    else if (section === "fields") await saveFields(tx, examId, form);
    else if (section === "segments") await saveSegments(tx, examId, form, all);
    else if (section === "assessment") await saveAssessment(tx, examId, form);
    // Triage runs on every save, on what is now saved, and is kept with the exam.
    const triage = await storedTriage(examId, tx);
    const savedAt = new Date();
    await tx.update(exams).set({ updatedAt: savedAt, triage }).where(eq(exams.id, examId));
    await audit(
      {
        action: "exam.section_saved",
        actorUserId: user.id,
        entityType: "exam",
        entityId: examId,
        patientId,
        detail: { section },
        request,
      },
      tx,
    );
    return savedAt.toISOString();
  });
}

/** The triage proposal to keep with the exam; a finding the engine refuses leaves it unset. */
export async function storedTriage(examId: string, conn: Tx | typeof db = db) {
  try {
    return (await examTriage(examId, conn)).result;
  } catch (e) {
    if (e instanceof TriageInputError) return null;
    throw e;
  }
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
