/**
 * Referral prompts: findings that commonly lead an optometrist to consider
 * further investigation or referral. Every prompt is a prompt for the
 * optometrist's judgement, never a referral decision; each carries the rule
 * it applied and the rule's source.
 */
import { assertFinite, clean, RxError } from "./core";
import { toLogMAR } from "./acuity";
import { checkBlindSpot, type BlindSpotMeasurement, type ColourVisionResult } from "./vision";

/** Which eye a finding belongs to. */
export type EyeSide = "right" | "left";
/** A finding recorded for either or both eyes. */
export type PerEye<T> = { right?: T; left?: T };

/** Findings from one examination; supply whichever were measured. */
/** How an IOP was measured. */
export type IopMethod = "applanation" | "non-contact" | "rebound" | "other";

export type ReferralFindings = {
  /** Intra-ocular pressure, mmHg: one value per eye, method not recorded (read as one reading of unknown method). */
  iopMmHg?: PerEye<number>;
  /** Intra-ocular pressure: every reading this visit and the method; the mean is used. Wins over `iopMmHg`. */
  iop?: PerEye<{ readings: number[]; method?: IopMethod }>;
  blindSpot?: PerEye<BlindSpotMeasurement>;
  colourVision?: PerEye<{
    result: ColourVisionResult["result"];
    /** True when this eye's result differs from its previous result (an acquired change). */
    changedFromPrevious?: boolean;
    /** Which axis the deficiency is on, when known (plates screen red-green only; blue-yellow needs its own test). */
    kind?: "red-green" | "blue-yellow";
    /** True when a blue-yellow deficiency of this eye was already on record before this visit. */
    blueYellowBefore?: boolean;
  }>;
  fieldDefect?: PerEye<{ present: boolean; description?: string }>;
  acuity?: PerEye<{
    /** Best-corrected acuity: logMAR number or any notation toLogMAR reads ("6/12", "20/40-2"). */
    bestCorrected: number | string;
    /** Best-corrected acuity at the previous visit, same forms. */
    previous?: number | string;
    /** True when the optometrist has recorded an explanation (e.g. known amblyopia, cataract under care). */
    explained?: boolean;
  }>;
};

/** Stable identifier of each kind of prompt (for UI lookup and audit). */
export type ReferralCode =
  | "IOP_ABOVE_NORMAL"
  | "IOP_ASYMMETRY"
  | "IOP_REPEAT"
  | "BLIND_SPOT_ENLARGED"
  | "BLIND_SPOT_DISPLACED"
  | "COLOUR_VISION_ACQUIRED"
  | "COLOUR_VISION_ASYMMETRIC"
  | "COLOUR_VISION_BLUE_YELLOW"
  | "FIELD_DEFECT"
  | "ACUITY_REDUCED"
  | "ACUITY_DROP";

/** One prompt: what was found, for which eye, the rule applied and its source. */
export type ReferralPrompt = {
  code: ReferralCode;
  /** What the prompt asks for: to consider referral, or to repeat a measurement before deciding. */
  action: "consider referral" | "repeat measurement";
  eye: EyeSide | "both";
  message: string;
  value: number | string;
  rule: string;
  source: string;
};

/** Appended to every rule: what the prompt is and is not. */
export const PROMPT_NOTE = "Prompt for the optometrist's judgement, not a referral decision.";

/** Upper limit of the population normal IOP (mean + 2 SD ≈ 21 mmHg, Hollows & Graham 1966 — from memory); no longer a referral threshold. */
export const IOP_UPPER_NORMAL_MMHG = 21;
/** Mean IOP (mmHg) by applanation at or above which referral is considered (NICE NG81 recommendation 1.1.4). */
export const IOP_REFER_MMHG = 24;
/** Mean IOP (mmHg) at or above which referral is an emergency whatever the method (College of Optometrists GPP C205). */
export const IOP_EMERGENCY_MMHG = 40;
/** Difference between the eyes (mmHg) at or above which IOP asymmetry is prompted. */
export const IOP_ASYMMETRY_MMHG = 5;
/** Best-corrected logMAR worse than this is prompted when unexplained. */
export const ACUITY_REDUCED_LOGMAR = 0.3;
/** Loss of best-corrected acuity (logMAR, two lines) since the previous visit that is prompted. */
export const ACUITY_DROP_LOGMAR = 0.2;
/** Chart labels are rounded (20/40 is 0.301), so values within this of a threshold count as on it. */
const LINE_TOLERANCE = 0.01;

const NG81_REFER =
  "NICE guideline NG81 (Glaucoma: diagnosis and management), recommendation 1.1.4: before deciding to refer, consider " +
  "repeating IOP measurement on another occasion to confirm an IOP of 24 mmHg or more";
const NG81_NCT =
  "NICE guideline NG81, recommendation 1.1.2: do not base a decision to refer solely on IOP measurement using non-contact " +
  "tonometry; 1.1.1: measure IOP with Goldmann-type applanation tonometry before referral";
const C205_IOP =
  "College of Optometrists, Guidance for Professional Practice, C205 Urgency of referrals: IOP of 40 mmHg or more (independent of cause) is an emergency referral";
const COMMON_PRACTICE = "Common practice";

const EYES: EyeSide[] = ["right", "left"];
const EYE_NAME: Record<EyeSide, string> = { right: "Right", left: "Left" };

function rule(text: string): string {
  return `${text}. ${PROMPT_NOTE}`;
}

function readLogMAR(value: number | string, what: string): number {
  if (typeof value === "string") return toLogMAR(value);
  assertFinite(value, what, "referralPrompts");
  return value;
}

function readIop(value: number, eye: EyeSide): number {
  assertFinite(value, `${EYE_NAME[eye]} IOP`, "referralPrompts");
  if (value < 1 || value > 80) throw new RxError(`${EYE_NAME[eye]} IOP ${value} mmHg is outside 1–80 mmHg`);
  return value;
}

type EyeIop = { mean: number; readings: number[]; method?: IopMethod };
const METHOD_WORDS: Record<IopMethod, string> = {
  applanation: "applanation",
  "non-contact": "non-contact tonometry",
  rebound: "rebound tonometry",
  other: "tonometry",
};
const fmt1 = (x: number) => String(clean(Math.round(x * 10) / 10));

function describeIop(eye: EyeSide, e: EyeIop): string {
  const how = e.method ? ` by ${METHOD_WORDS[e.method]}` : "";
  return e.readings.length === 1
    ? `${EYE_NAME[eye]} IOP ${fmt1(e.mean)} mmHg${how} (one reading)`
    : `${EYE_NAME[eye]} mean IOP ${fmt1(e.mean)} mmHg${how} (readings ${e.readings.map(fmt1).join(", ")})`;
}

function iopOf(findings: ReferralFindings): Partial<Record<EyeSide, EyeIop>> {
  const out: Partial<Record<EyeSide, EyeIop>> = {};
  for (const eye of EYES) {
    const detailed = findings.iop?.[eye];
    const single = findings.iopMmHg?.[eye];
    if (detailed !== undefined) {
      if (!Array.isArray(detailed.readings) || detailed.readings.length === 0) continue;
      const readings = detailed.readings.map((r) => readIop(r, eye));
      if (detailed.method !== undefined && !Object.hasOwn(METHOD_WORDS, detailed.method))
        throw new RxError(`${EYE_NAME[eye]} IOP method "${String(detailed.method)}" is not known`);
      out[eye] = { mean: readings.reduce((x, y) => x + y, 0) / readings.length, readings, method: detailed.method };
    } else if (single !== undefined) {
      const value = readIop(single, eye);
      out[eye] = { mean: value, readings: [value] };
    }
  }
  return out;
}

/**
 * IOP prompts on the mean of each eye's readings. By applanation, a mean of 24 mmHg or more
 * prompts referral (NICE NG81 1.1.4), as does an asymmetry of 5 mmHg or more between the means.
 * Below 40 mmHg, a finding resting on non-contact, rebound or unrecorded tonometry prompts a
 * repeat by applanation instead (NG81 1.1.2), and one resting on a single such reading says so.
 * A mean of 40 mmHg or more prompts referral whatever the method (College of Optometrists C205).
 */
function iopPrompts(findings: ReferralFindings): ReferralPrompt[] {
  const prompts: ReferralPrompt[] = [];
  const values = iopOf(findings);
  const confirmed = (e: EyeIop) => e.method === "applanation";
  const rounded = (x: number) => clean(Math.round(x * 10) / 10);
  for (const eye of EYES) {
    const e = values[eye];
    if (!e) continue;
    const text = describeIop(eye, e);
    if (e.mean >= IOP_EMERGENCY_MMHG) {
      prompts.push({
        code: "IOP_ABOVE_NORMAL",
        action: "consider referral",
        eye,
        message: `${text}: ${IOP_EMERGENCY_MMHG} mmHg or more`,
        value: rounded(e.mean),
        rule: rule(`Mean IOP of ${IOP_EMERGENCY_MMHG} mmHg or more, by any method`),
        source: C205_IOP,
      });
    } else if (e.mean >= IOP_REFER_MMHG - 1e-9) {
      if (confirmed(e)) {
        prompts.push({
          code: "IOP_ABOVE_NORMAL",
          action: "consider referral",
          eye,
          message: `${text}: ${IOP_REFER_MMHG} mmHg or more`,
          value: rounded(e.mean),
          rule: rule(`Mean IOP by applanation of ${IOP_REFER_MMHG} mmHg or more`),
          source: NG81_REFER,
        });
      } else {
        prompts.push({
          code: "IOP_REPEAT",
          action: "repeat measurement",
          eye,
          message: `${text}: ${IOP_REFER_MMHG} mmHg or more — repeat with Goldmann-type applanation before deciding to refer`,
          value: rounded(e.mean),
          rule: rule(
            `Mean IOP of ${IOP_REFER_MMHG} mmHg or more not measured by applanation: repeat by applanation, do not refer on this alone`,
          ),
          source: NG81_NCT,
        });
      }
    }
  }
  const r = values.right;
  const l = values.left;
  if (r && l) {
    const difference = rounded(Math.abs(r.mean - l.mean));
    if (difference >= IOP_ASYMMETRY_MMHG - 1e-9) {
      const both = `R ${fmt1(r.mean)}, L ${fmt1(l.mean)}`;
      if (confirmed(r) && confirmed(l)) {
        prompts.push({
          code: "IOP_ASYMMETRY",
          action: "consider referral",
          eye: "both",
          message: `Mean IOP differs by ${difference} mmHg between the eyes (${both}, applanation)`,
          value: difference,
          rule: rule(`Difference of ${IOP_ASYMMETRY_MMHG} mmHg or more between the eyes' mean IOP by applanation`),
          source: COMMON_PRACTICE,
        });
      } else {
        const single = r.readings.length === 1 || l.readings.length === 1;
        prompts.push({
          code: "IOP_REPEAT",
          action: "repeat measurement",
          eye: "both",
          message: single
            ? `IOP differs by ${difference} mmHg between the eyes on a single reading (${both}) — take several readings per eye, or measure by applanation, before considering referral`
            : `Mean IOP differs by ${difference} mmHg between the eyes (${both}) without applanation — confirm by applanation before considering referral`,
          value: difference,
          rule: rule(
            `Difference of ${IOP_ASYMMETRY_MMHG} mmHg or more between the eyes not confirmed by applanation: repeat before deciding`,
          ),
          source: `${COMMON_PRACTICE} (asymmetry); ${NG81_NCT}`,
        });
      }
    }
  }
  return prompts;
}

function blindSpotPrompts(spots: PerEye<BlindSpotMeasurement>): ReferralPrompt[] {
  const prompts: ReferralPrompt[] = [];
  for (const eye of EYES) {
    const spot = spots[eye];
    if (spot === undefined) continue;
    const check = checkBlindSpot(spot);
    if (check.status === "within normal") continue;
    const where = `${Math.abs(spot.centreXDeg)}° ${spot.centreXDeg >= 0 ? "temporal" : "nasal"}, ${Math.abs(spot.centreYDeg)}° ${spot.centreYDeg >= 0 ? "above" : "below"}`;
    prompts.push({
      code: check.status === "enlarged" ? "BLIND_SPOT_ENLARGED" : "BLIND_SPOT_DISPLACED",
      action: "consider referral",
      eye,
      message: `${EYE_NAME[eye]} blind spot ${check.status}: ${check.reasons.join("; ")}`,
      value: `${spot.widthDeg}° × ${spot.heightDeg}° centred ${where}`,
      rule: rule(check.rule),
      source: check.source,
    });
  }
  return prompts;
}

function colourVisionPrompts(cv: NonNullable<ReferralFindings["colourVision"]>): ReferralPrompt[] {
  const prompts: ReferralPrompt[] = [];
  for (const eye of EYES) {
    const finding = cv[eye];
    if (finding?.result === "deficiency suspected" && finding.changedFromPrevious === true) {
      prompts.push({
        code: "COLOUR_VISION_ACQUIRED",
        action: "consider referral",
        eye,
        message: `${EYE_NAME[eye]} colour vision has changed since the previous result (now deficiency suspected)`,
        value: finding.result,
        rule: rule("Colour-vision deficiency that is new compared with a previous result (acquired)"),
        source: `${COMMON_PRACTICE}: congenital red-green deficiency is present from birth and stable, so a change suggests an acquired cause`,
      });
    }
  }
  for (const eye of EYES) {
    const finding = cv[eye];
    if (
      finding?.kind !== "blue-yellow" ||
      finding.result !== "deficiency suspected" ||
      finding.blueYellowBefore === true
    )
      continue;
    prompts.push({
      code: "COLOUR_VISION_BLUE_YELLOW",
      action: "consider referral",
      eye,
      message: `${EYE_NAME[eye]} eye: blue-yellow colour-vision defect found for the first time`,
      value: "blue-yellow defect",
      rule: rule("A blue-yellow (tritan) defect not on record before"),
      source:
        `${COMMON_PRACTICE}: congenital tritan defects are rare (of the order of 1 in 10,000 or fewer — from memory), so a new ` +
        "blue-yellow defect is usually acquired (optic nerve or macular disease, cataract, medication) and calls for investigation",
    });
  }
  const right = cv.right?.result;
  const left = cv.left?.result;
  const pair = [right, left];
  if (pair.includes("normal") && pair.includes("deficiency suspected")) {
    const eye: EyeSide = right === "deficiency suspected" ? "right" : "left";
    prompts.push({
      code: "COLOUR_VISION_ASYMMETRIC",
      action: "consider referral",
      eye,
      message: `Colour vision differs between the eyes (${EYE_NAME[eye].toLowerCase()} eye deficiency suspected)`,
      value: `R ${right}, L ${left}`,
      rule: rule("Colour-vision result differs between the eyes (one normal, one deficient)"),
      source: `${COMMON_PRACTICE}: congenital deficiencies affect both eyes equally, so a one-eye deficiency suggests an acquired cause`,
    });
  }
  return prompts;
}

function fieldPrompts(fields: NonNullable<ReferralFindings["fieldDefect"]>): ReferralPrompt[] {
  const prompts: ReferralPrompt[] = [];
  for (const eye of EYES) {
    const field = fields[eye];
    if (field?.present !== true) continue;
    const description = field.description?.trim() || "field defect recorded";
    prompts.push({
      code: "FIELD_DEFECT",
      action: "consider referral",
      eye,
      message: `${EYE_NAME[eye]} visual field defect: ${description}`,
      value: description,
      rule: rule("Visual field defect recorded"),
      source: COMMON_PRACTICE,
    });
  }
  return prompts;
}

function acuityPrompts(acuity: NonNullable<ReferralFindings["acuity"]>): ReferralPrompt[] {
  const prompts: ReferralPrompt[] = [];
  for (const eye of EYES) {
    const finding = acuity[eye];
    if (finding === undefined) continue;
    const now = readLogMAR(finding.bestCorrected, `${EYE_NAME[eye]} best-corrected acuity`);
    const before =
      finding.previous === undefined ? undefined : readLogMAR(finding.previous, `${EYE_NAME[eye]} previous acuity`);
    if (finding.explained === true) continue;
    if (now > ACUITY_REDUCED_LOGMAR + LINE_TOLERANCE) {
      prompts.push({
        code: "ACUITY_REDUCED",
        action: "consider referral",
        eye,
        message: `${EYE_NAME[eye]} best-corrected acuity ${now.toFixed(2)} logMAR is worse than ${ACUITY_REDUCED_LOGMAR.toFixed(2)} and unexplained`,
        value: now,
        rule: rule(
          `Unexplained best-corrected acuity worse than ${ACUITY_REDUCED_LOGMAR.toFixed(2)} logMAR (6/12, 20/40)`,
        ),
        source: COMMON_PRACTICE,
      });
    }
    if (before !== undefined) {
      const loss = clean(now - before);
      if (loss >= ACUITY_DROP_LOGMAR - LINE_TOLERANCE) {
        prompts.push({
          code: "ACUITY_DROP",
          action: "consider referral",
          eye,
          message: `${EYE_NAME[eye]} best-corrected acuity has dropped ${loss.toFixed(2)} logMAR since the previous visit`,
          value: loss,
          rule: rule(
            `Unexplained loss of ${ACUITY_DROP_LOGMAR.toFixed(1)} logMAR (two lines) or more since the previous visit`,
          ),
          source: COMMON_PRACTICE,
        });
      }
    }
  }
  return prompts;
}

/**
 * Prompts raised by an examination's findings: mean IOP of 24 mmHg or more
 * or asymmetric by 5 mmHg or more (by applanation; otherwise a prompt to
 * repeat the measurement), 40 mmHg or more by any method, an enlarged or displaced blind spot, an
 * acquired or one-eyed colour-vision deficiency, a recorded field defect,
 * and unexplained best-corrected acuity worse than 0.30 logMAR or two lines
 * worse than before. Returns an empty list when nothing is prompted.
 *
 * @throws RxError (or AcuityError) on implausible or unreadable values.
 */
export function referralPrompts(findings: ReferralFindings): ReferralPrompt[] {
  if (findings === null || typeof findings !== "object") throw new RxError("Findings are required in referralPrompts");
  return [
    ...(findings.iopMmHg || findings.iop ? iopPrompts(findings) : []),
    ...(findings.blindSpot ? blindSpotPrompts(findings.blindSpot) : []),
    ...(findings.colourVision ? colourVisionPrompts(findings.colourVision) : []),
    ...(findings.fieldDefect ? fieldPrompts(findings.fieldDefect) : []),
    ...(findings.acuity ? acuityPrompts(findings.acuity) : []),
  ];
}
