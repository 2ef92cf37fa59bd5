/** Referral prompts of the optics engine from an exam's saved findings and the previous visit's. */
import { and, desc, eq, inArray, lt } from "drizzle-orm";
import { examAcuity, examColourVision, examIop, examRefractions, exams, examVisualFields } from "~/db/schema";
import { EYES } from "~/lib/exam/sections";
import { referralPrompts, type ReferralFindings, type ReferralPrompt } from "~/lib/optics";
import { iopForTriage } from "~/models/exams/triage.server";
import { allOf, db, type Tx } from "~/utils/db.server";
import type { ExamSections } from "./exam-records.server";

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
/**
 * The findings of the patient's exam before this one that the prompts and triage compare with:
 * its colour vision, acuity and final refraction (empty when there is none).
 */
export async function previousExamFindings(patientId: string, examinedAt: Date, conn: Tx | typeof db = db) {
  const [prevExam] = await conn
    .select({ id: exams.id })
    .from(exams)
    .where(and(eq(exams.patientId, patientId), lt(exams.examinedAt, examinedAt)))
    .orderBy(desc(exams.examinedAt))
    .limit(1);
  if (!prevExam) return { colour: [], acuity: [], refractions: [] };
  const [colour, acuity, refractions] = await allOf(conn, [
    conn.select().from(examColourVision).where(eq(examColourVision.examId, prevExam.id)),
    conn.select().from(examAcuity).where(eq(examAcuity.examId, prevExam.id)),
    conn
      .select()
      .from(examRefractions)
      .where(and(eq(examRefractions.examId, prevExam.id), eq(examRefractions.kind, "final"))),
  ]);
  return { colour, acuity, refractions };
}

export async function promptsFor(
  patientId: string,
  exam: { id: string; examinedAt: Date },
  s: ExamSections,
  conn: Tx | typeof db = db,
): Promise<ReferralPrompt[]> {
  return promptsFrom(s, await previousExamFindings(patientId, exam.examinedAt, conn));
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
