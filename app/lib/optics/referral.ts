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
export type ReferralFindings = {
  /** Intra-ocular pressure, mmHg. */
  iopMmHg?: PerEye<number>;
  blindSpot?: PerEye<BlindSpotMeasurement>;
  colourVision?: PerEye<{
    result: ColourVisionResult["result"];
    /** True when this eye's result differs from its previous result (an acquired change). */
    changedFromPrevious?: boolean;
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
  | "BLIND_SPOT_ENLARGED"
  | "BLIND_SPOT_DISPLACED"
  | "COLOUR_VISION_ACQUIRED"
  | "COLOUR_VISION_ASYMMETRIC"
  | "FIELD_DEFECT"
  | "ACUITY_REDUCED"
  | "ACUITY_DROP";

/** One prompt: what was found, for which eye, the rule applied and its source. */
export type ReferralPrompt = {
  code: ReferralCode;
  eye: EyeSide | "both";
  message: string;
  value: number | string;
  rule: string;
  source: string;
};

/** Appended to every rule: what the prompt is and is not. */
export const PROMPT_NOTE = "Prompt for the optometrist's judgement, not a referral decision.";

/** IOP above this (mmHg) is prompted. */
export const IOP_UPPER_NORMAL_MMHG = 21;
/** Difference between the eyes (mmHg) at or above which IOP asymmetry is prompted. */
export const IOP_ASYMMETRY_MMHG = 5;
/** Best-corrected logMAR worse than this is prompted when unexplained. */
export const ACUITY_REDUCED_LOGMAR = 0.3;
/** Loss of best-corrected acuity (logMAR, two lines) since the previous visit that is prompted. */
export const ACUITY_DROP_LOGMAR = 0.2;
/** Chart labels are rounded (20/40 is 0.301), so values within this of a threshold count as on it. */
const LINE_TOLERANCE = 0.01;

const IOP_SOURCE =
  "Upper limit of the population normal range (mean + 2 SD ≈ 21 mmHg): Hollows FC, Graham PA. Intra-ocular " +
  "pressure, glaucoma, and glaucoma suspects in a defined population. Br J Ophthalmol 1966;50:570–586 (from memory); " +
  "common practice";
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
  if (value < 0 || value > 80) throw new RxError(`${EYE_NAME[eye]} IOP ${value} mmHg is outside 0–80 mmHg`);
  return value;
}

function iopPrompts(iop: PerEye<number>): ReferralPrompt[] {
  const prompts: ReferralPrompt[] = [];
  const values: Partial<Record<EyeSide, number>> = {};
  for (const eye of EYES) {
    const raw = iop[eye];
    if (raw === undefined) continue;
    const value = readIop(raw, eye);
    values[eye] = value;
    if (value > IOP_UPPER_NORMAL_MMHG) {
      prompts.push({
        code: "IOP_ABOVE_NORMAL",
        eye,
        message: `${EYE_NAME[eye]} IOP ${value} mmHg is above ${IOP_UPPER_NORMAL_MMHG} mmHg`,
        value,
        rule: rule(`IOP above ${IOP_UPPER_NORMAL_MMHG} mmHg`),
        source: IOP_SOURCE,
      });
    }
  }
  if (values.right !== undefined && values.left !== undefined) {
    const difference = clean(Math.abs(values.right - values.left));
    if (difference >= IOP_ASYMMETRY_MMHG) {
      prompts.push({
        code: "IOP_ASYMMETRY",
        eye: "both",
        message: `IOP differs by ${difference} mmHg between the eyes (R ${values.right}, L ${values.left})`,
        value: difference,
        rule: rule(`IOP difference between the eyes of ${IOP_ASYMMETRY_MMHG} mmHg or more`),
        source: COMMON_PRACTICE,
      });
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
        eye,
        message: `${EYE_NAME[eye]} colour vision has changed since the previous result (now deficiency suspected)`,
        value: finding.result,
        rule: rule("Colour-vision deficiency that is new compared with a previous result (acquired)"),
        source: `${COMMON_PRACTICE}: congenital red-green deficiency is present from birth and stable, so a change suggests an acquired cause`,
      });
    }
  }
  const right = cv.right?.result;
  const left = cv.left?.result;
  const pair = [right, left];
  if (pair.includes("normal") && pair.includes("deficiency suspected")) {
    const eye: EyeSide = right === "deficiency suspected" ? "right" : "left";
    prompts.push({
      code: "COLOUR_VISION_ASYMMETRIC",
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
    const before = finding.previous === undefined ? undefined : readLogMAR(finding.previous, `${EYE_NAME[eye]} previous acuity`);
    if (finding.explained === true) continue;
    if (now > ACUITY_REDUCED_LOGMAR + LINE_TOLERANCE) {
      prompts.push({
        code: "ACUITY_REDUCED",
        eye,
        message: `${EYE_NAME[eye]} best-corrected acuity ${now.toFixed(2)} logMAR is worse than ${ACUITY_REDUCED_LOGMAR.toFixed(2)} and unexplained`,
        value: now,
        rule: rule(`Unexplained best-corrected acuity worse than ${ACUITY_REDUCED_LOGMAR.toFixed(2)} logMAR (6/12, 20/40)`),
        source: COMMON_PRACTICE,
      });
    }
    if (before !== undefined) {
      const loss = clean(now - before);
      if (loss >= ACUITY_DROP_LOGMAR - LINE_TOLERANCE) {
        prompts.push({
          code: "ACUITY_DROP",
          eye,
          message: `${EYE_NAME[eye]} best-corrected acuity has dropped ${loss.toFixed(2)} logMAR since the previous visit`,
          value: loss,
          rule: rule(`Unexplained loss of ${ACUITY_DROP_LOGMAR.toFixed(1)} logMAR (two lines) or more since the previous visit`),
          source: COMMON_PRACTICE,
        });
      }
    }
  }
  return prompts;
}

/**
 * Prompts raised by an examination's findings: IOP above 21 mmHg or
 * asymmetric by 5 mmHg or more, an enlarged or displaced blind spot, an
 * acquired or one-eyed colour-vision deficiency, a recorded field defect,
 * and unexplained best-corrected acuity worse than 0.30 logMAR or two lines
 * worse than before. Returns an empty list when nothing is prompted.
 *
 * @throws RxError (or AcuityError) on implausible or unreadable values.
 */
export function referralPrompts(findings: ReferralFindings): ReferralPrompt[] {
  if (findings === null || typeof findings !== "object") throw new RxError("Findings are required in referralPrompts");
  return [
    ...(findings.iopMmHg ? iopPrompts(findings.iopMmHg) : []),
    ...(findings.blindSpot ? blindSpotPrompts(findings.blindSpot) : []),
    ...(findings.colourVision ? colourVisionPrompts(findings.colourVision) : []),
    ...(findings.fieldDefect ? fieldPrompts(findings.fieldDefect) : []),
    ...(findings.acuity ? acuityPrompts(findings.acuity) : []),
  ];
}
