/**
 * Referral triage of one exam: the engine's proposal (`~/lib/referrals`) from the exam's saved
 * findings and the best-corrected acuity of the patient's previous visit. A proposal for the
 * optometrist, never a decision.
 */
import { and, desc, eq, lt } from "drizzle-orm";
import {
  examAcuity,
  examAnteriorChamber,
  examDiscs,
  examFundus,
  examIop,
  examPupils,
  examRedFlags,
  examRefractions,
  exams,
  examVisualFields,
  patients,
  practiceSettings,
} from "~/db/schema";
import { checkBlindSpot } from "~/lib/optics";
import {
  triage,
  TriageInputError,
  type Eye,
  type EyeFindings,
  type TriageInput,
  type TriageResult,
} from "~/lib/referrals";
import { localParts } from "~/lib/scheduling/time";
import { ageInYears as ageOn } from "~/lib/format";
import { allOf, db, type Tx } from "~/utils/db.server";

type Conn = Tx | typeof db;
type EyeKey = "right" | "left";
const SHORT: Record<EyeKey, Eye> = { right: "R", left: "L" };

const METHOD: Record<string, NonNullable<EyeFindings["iopMethod"]>> = {
  goldmann: "applanation",
  handheld_applanation: "applanation",
  rebound: "rebound",
  non_contact: "non-contact",
  other: "other",
};
/** Applanation is the reference method, then rebound, then non-contact (common practice). */
const PREFERENCE: NonNullable<EyeFindings["iopMethod"]>[] = ["applanation", "rebound", "non-contact", "other"];

/** The readings triage uses for one eye: all readings of the best method taken. */
export function iopForTriage(
  rows: readonly { mmHg: number; method: string }[],
): { iopMmHg: number[]; iopMethod: NonNullable<EyeFindings["iopMethod"]> } | null {
  for (const m of PREFERENCE) {
    const of = rows.filter((r) => METHOD[r.method] === m);
    if (of.length) return { iopMmHg: of.map((r) => r.mmHg), iopMethod: m };
  }
  return null;
}

type AcuityRow = typeof examAcuity.$inferSelect;
type RefractionRow = typeof examRefractions.$inferSelect;

/**
 * Best-corrected distance acuity of each eye: the best-corrected distance acuity row, else the
 * final refraction's VA.
 */
export function bestVaOf(
  acuity: readonly AcuityRow[],
  refractions: readonly RefractionRow[],
): Partial<Record<EyeKey, number>> {
  const out: Partial<Record<EyeKey, number>> = {};
  for (const eye of ["right", "left"] as const) {
    const a = acuity.find((r) => r.eye === eye && r.distance === "distance" && r.correction === "best");
    const f = refractions.find((r) => r.eye === eye && r.kind === "final" && r.vaLogMar !== null);
    if (a) out[eye] = a.logMar;
    else if (f) out[eye] = f.vaLogMar!;
  }
  return out;
}

async function bestVa(conn: Conn, examId: string): Promise<Partial<Record<EyeKey, number>>> {
  const [acuity, finals] = await allOf(conn, [
    conn
      .select()
      .from(examAcuity)
      .where(
        and(eq(examAcuity.examId, examId), eq(examAcuity.distance, "distance"), eq(examAcuity.correction, "best")),
      ),
    conn
      .select()
      .from(examRefractions)
      .where(and(eq(examRefractions.examId, examId), eq(examRefractions.kind, "final"))),
  ]);
  return bestVaOf(acuity, finals);
}

/** The saved findings triage reads, as rows of their tables. */
export type TriageRows = {
  examinedAt: Date;
  dateOfBirth: string;
  timeZone: string;
  iop: readonly (typeof examIop.$inferSelect)[];
  redFlags: typeof examRedFlags.$inferSelect | null;
  pupils: readonly (typeof examPupils.$inferSelect)[];
  anteriorChamber: readonly (typeof examAnteriorChamber.$inferSelect)[];
  discs: readonly (typeof examDiscs.$inferSelect)[];
  fundus: readonly (typeof examFundus.$inferSelect)[];
  fields: readonly (typeof examVisualFields.$inferSelect)[];
  va: Partial<Record<EyeKey, number>>;
  previousVa: Partial<Record<EyeKey, number>>;
};

export async function examTriageInput(examId: string, conn: Conn = db): Promise<TriageInput> {
  const [exam] = await conn
    .select({ examinedAt: exams.examinedAt, patientId: exams.patientId, dateOfBirth: patients.dateOfBirth })
    .from(exams)
    .innerJoin(patients, eq(patients.id, exams.patientId))
    .where(eq(exams.id, examId));
  if (!exam) throw new Error(`Exam ${examId} not found`);
  const [settings] = await conn
    .select({ timeZone: practiceSettings.timeZone })
    .from(practiceSettings)
    .where(eq(practiceSettings.id, 1));
  const [iop, flags, pupils, ac, discs, fundus, fields, va, previous] = await allOf(conn, [
    conn.select().from(examIop).where(eq(examIop.examId, examId)),
    conn.select().from(examRedFlags).where(eq(examRedFlags.examId, examId)),
    conn.select().from(examPupils).where(eq(examPupils.examId, examId)),
    conn.select().from(examAnteriorChamber).where(eq(examAnteriorChamber.examId, examId)),
    conn.select().from(examDiscs).where(eq(examDiscs.examId, examId)),
    conn.select().from(examFundus).where(eq(examFundus.examId, examId)),
    conn.select().from(examVisualFields).where(eq(examVisualFields.examId, examId)),
    () => bestVa(conn, examId),
    conn
      .select({ id: exams.id })
      .from(exams)
      .where(and(eq(exams.patientId, exam.patientId), lt(exams.examinedAt, exam.examinedAt)))
      .orderBy(desc(exams.examinedAt))
      .limit(1),
  ]);
  const prevVa = previous[0] ? await bestVa(conn, previous[0].id) : {};
  return triageInputOf({
    examinedAt: exam.examinedAt,
    dateOfBirth: exam.dateOfBirth,
    timeZone: settings?.timeZone ?? "Europe/London",
    iop,
    redFlags: flags[0] ?? null,
    pupils,
    anteriorChamber: ac,
    discs,
    fundus,
    fields,
    va,
    previousVa: prevVa,
  });
}

/** The engine's input from the saved findings (no database: the exam page passes what it read). */
export function triageInputOf(rows: TriageRows): TriageInput {
  const { iop, pupils, discs, fundus, fields, va } = rows;
  const ac = rows.anteriorChamber;
  const prevVa = rows.previousVa;
  const examDay = localParts(rows.examinedAt, rows.timeZone).date;
  const rf = rows.redFlags;
  const eyes: TriageInput["eyes"] = {};
  for (const eye of ["right", "left"] as const) {
    const f: EyeFindings = {};
    const inEye = (v: string | null | undefined) => v === eye || v === "both";
    const readings = iopForTriage(iop.filter((r) => r.eye === eye).sort((a, b) => a.reading - b.reading));
    if (readings) Object.assign(f, readings);
    if (va[eye] !== undefined) f.vaLogMAR = va[eye];
    if (prevVa[eye] !== undefined) f.previousVaLogMAR = prevVa[eye];
    if (rf) {
      if (inEye(rf.suddenLoss)) f.suddenVisionLoss = true;
      if (inEye(rf.flashes)) f.flashes = true;
      if (inEye(rf.newFloaters)) f.newFloaters = true;
      if (inEye(rf.curtain)) f.curtain = true;
      if (inEye(rf.severePain)) f.severePain = true;
      if (inEye(rf.redEye)) f.redEye = true;
      if (inEye(rf.distortion)) f.distortion = true;
    }
    const d = discs.find((r) => r.eye === eye);
    if (d) {
      if (d.verticalCd !== null) f.verticalCupDisc = d.verticalCd;
      if (d.swelling) f.discSwelling = true;
      if (d.haemorrhage) f.discHaemorrhage = true;
    }
    if (pupils.find((r) => r.eye === eye)?.rapd) f.rapd = true;
    const a = ac.find((r) => r.eye === eye);
    if (a) {
      if (a.cells && a.cells !== "none" && a.cells !== "trace") f.anteriorChamberCells = true;
      if (a.hyphaema) f.hyphaema = true;
      if (a.hypopyon) f.hypopyon = true;
    }
    const fu = fundus.find((r) => r.eye === eye);
    if (fu) {
      if (fu.retinalBreak) f.retinalBreak = true;
      if (fu.retinalDetachment) f.retinalDetachment = true;
      if (fu.vitreousPigment) f.vitreousPigment = true;
      if (fu.suspectedWetAmd) f.suspectedWetAmd = true;
    }
    // The plotted blind spot, judged by the same rule as the exam's prompts.
    const vf = fields.find((r) => r.eye === eye);
    if (
      vf &&
      vf.blindSpotXDeg !== null &&
      vf.blindSpotYDeg !== null &&
      vf.blindSpotWidthDeg !== null &&
      vf.blindSpotHeightDeg !== null
    ) {
      if (
        checkBlindSpot({
          centreXDeg: vf.blindSpotXDeg,
          centreYDeg: vf.blindSpotYDeg,
          widthDeg: vf.blindSpotWidthDeg,
          heightDeg: vf.blindSpotHeightDeg,
        }).status === "enlarged"
      )
        f.enlargedBlindSpot = true;
    }
    if (Object.keys(f).length) eyes[SHORT[eye]] = f;
  }
  const input: TriageInput = { ageYears: ageOn(rows.dateOfBirth, examDay), eyes };
  if (rf?.newDiplopia) input.newDiplopia = true;
  if (rf?.gcaSymptoms) input.gcaSymptoms = true;
  if (rf?.headache || rf?.gcaSymptoms) input.headache = true;
  return input;
}

/** The triage proposal of an exam from its saved sections. */
export async function examTriage(
  examId: string,
  conn: Conn = db,
): Promise<{ input: TriageInput; result: TriageResult }> {
  const input = await examTriageInput(examId, conn);
  return { input, result: triage(input) };
}

/** The proposal to keep with an exam; null when a saved finding is one the engine refuses. */
export function proposalOf(input: TriageInput): TriageResult | null {
  try {
    return triage(input);
  } catch (e) {
    if (e instanceof TriageInputError) return null;
    throw e;
  }
}
