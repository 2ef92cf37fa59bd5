/** Saving one section of an in-progress exam: parse the whole section, then write it or refuse it. */
import { and, eq } from "drizzle-orm";
import { data } from "react-router";
import {
  examAcuity,
  examAssessment,
  examBinocular,
  examColourVision,
  examCornealThickness,
  examDiagnoses,
  examHistory,
  examIop,
  examRefractions,
  exams,
  examSectionStates,
  examSegments,
  examVisualFields,
} from "~/db/schema";
import {
  ACUITY_CORRECTIONS,
  ACUITY_DISTANCES,
  ACUITY_EYES,
  acuityField,
  COLOUR_RESULTS,
  COLOUR_TESTS,
  EYES,
  FIELD_METHODS,
  localDateTime,
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
import type { AcuityNotation } from "~/lib/optics";
import { FINDINGS_SECTIONS, FindingsError, saveFindings, type FindingsSection } from "~/models/exams/findings.server";
import { audit } from "~/utils/audit.server";
import type { SessionUser } from "~/utils/session.server";
import { db, type Tx } from "~/utils/db.server";
import type { ExamSectionId, StoredSectionState } from "~/lib/exam/section-list";
import { examSettings, SectionError, storedTriage } from "./exam-records.server";
import { isClSection } from "~/lib/contact-lens/sections";
import { saveContactLensSection } from "./contact-lens.server";

type Form = Record<string, string | undefined>;

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

async function saveIop(tx: Tx, examId: string, form: Form, timeZone: string) {
  // A reading typed without its time of day was taken now (the field shows the time once saved).
  const parsed = parseIop(form, { defaultTime: localDateTime(new Date(), timeZone).slice(11, 16) });
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
  try {
    return await writeSection(user, patientId, examId, section, form, all, request);
  } catch (e) {
    if (e instanceof SectionError) await keepRefused(examId, section, all, e);
    throw e;
  }
}

/**
 * A refused save keeps what was typed and why beside the section (the section's own rows are
 * untouched), so a reload shows the section as not saved, with the typed values and the errors.
 */
async function keepRefused(examId: string, section: Section, all: FormData, e: SectionError) {
  const typed = [...all.entries()].flatMap(([k, v]) =>
    typeof v === "string" && k !== "intent" && k !== "section" ? [[k, v.slice(0, 8000)] as [string, string]] : [],
  );
  const refused = {
    failedAt: new Date(),
    failureMessage: e.message,
    refusedValues: typed,
    refusedErrors: e.fieldErrors ?? {},
  };
  await db
    .insert(examSectionStates)
    .values({ examId, section, ...refused })
    .onConflictDoUpdate({ target: [examSectionStates.examId, examSectionStates.section], set: refused });
}

/** Each section's last save and last refusal (with the refused values), by section id. */
export async function sectionStatesOf(examId: string, conn: Tx | typeof db = db) {
  const rows = await conn.select().from(examSectionStates).where(eq(examSectionStates.examId, examId));
  return Object.fromEntries(
    rows.map((r) => {
      const failed = r.failedAt && (!r.savedAt || r.failedAt > r.savedAt);
      return [
        r.section,
        {
          savedAt: r.savedAt?.toISOString() ?? null,
          refused: failed
            ? {
                at: r.failedAt!.toISOString(),
                message: r.failureMessage ?? "",
                values: r.refusedValues ?? [],
                errors: r.refusedErrors ?? {},
              }
            : null,
        },
      ];
    }),
  ) as Record<string, StoredSectionState>;
}

async function writeSection(
  user: SessionUser,
  patientId: string,
  examId: string,
  section: Section,
  form: Form,
  all: FormData,
  request: Request,
) {
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
    else if (section === "iop") await saveIop(tx, examId, form, settings.timeZone);
    else if (section === "colour") await saveColour(tx, examId, form);
    else if (section === "fields") await saveFields(tx, examId, form);
    else if (section === "segments") await saveSegments(tx, examId, form, all);
    else if (section === "assessment") await saveAssessment(tx, examId, form);
    else if (isClSection(section)) await saveContactLensSection(tx, examId, section, form, settings.acuityNotation);
    // Triage runs on every save, on what is now saved, and is kept with the exam.
    const triage = await storedTriage(examId, tx);
    const savedAt = new Date();
    await tx.update(exams).set({ updatedAt: savedAt, triage }).where(eq(exams.id, examId));
    const saved = { savedAt, failedAt: null, failureMessage: null, refusedValues: null, refusedErrors: null };
    await tx
      .insert(examSectionStates)
      .values({ examId, section, ...saved })
      .onConflictDoUpdate({ target: [examSectionStates.examId, examSectionStates.section], set: saved });
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
