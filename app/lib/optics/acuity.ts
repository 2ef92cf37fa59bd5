/**
 * Visual acuity notations and logMAR.
 *
 * logMAR = log10(minimum angle of resolution in minutes of arc); a Snellen
 * fraction d/D equals decimal acuity and gives logMAR = log10(D/d)
 * (Bailey IL, Lovie JE. New design principles for visual acuity letter
 * charts. Am J Optom Physiol Opt 1976;53:740–745; International Council of
 * Ophthalmology, Visual Acuity Measurement Standard, 1984).
 */
import { assertFinite, clean, quote, RxError } from "./core";

/** Thrown on unreadable or implausible acuity input. */
export class AcuityError extends RxError {
  override name = "AcuityError";
}

/** logMAR range the engine accepts and returns (−0.5 ≈ 20/6 to 3.0 = NLP stand-in). */
export const LOGMAR_RANGE = { min: -0.5, max: 3 } as const;

/** Letters of a 5-letter logMAR line: each letter is worth 0.02 logMAR (Bailey & Lovie 1976). */
export const LOGMAR_PER_LETTER = 0.02;

/** Stand-in logMAR values for the clinical low-vision categories, with their sources. */
export const LOW_VISION_LOGMAR = {
  CF: {
    logMAR: 1.85,
    label: "counting fingers",
    source:
      "Schulze-Bonsel K, Feltgen N, Burau H, Hansen L, Bach M. Visual acuities “hand motion” and “counting fingers” " +
      "can be quantified with the Freiburg Visual Acuity Test. Invest Ophthalmol Vis Sci 2006;47(3):1236–1240: " +
      "CF ≈ decimal 0.014, i.e. logMAR −log10(0.014) = 1.85",
  },
  HM: {
    logMAR: 2.3,
    label: "hand motion",
    source:
      "Schulze-Bonsel et al. 2006 (as for CF): HM ≈ decimal 0.005, i.e. logMAR −log10(0.005) = 2.30",
  },
  LP: {
    logMAR: 2.7,
    label: "light perception",
    source:
      "Bach M, Visual Acuity “Cheat Sheet” (michaelbach.de/sci/acuity.html): LP 2.7 logMAR, " +
      "an imputation rather than a measurement",
  },
  NLP: {
    logMAR: 3,
    label: "no light perception",
    source: "Bach M, Visual Acuity “Cheat Sheet” (as for LP): NLP 3.0 logMAR, an imputation",
  },
} as const;

/** Clinical low-vision categories: counting fingers, hand motion, light perception, no light perception. */
export type LowVisionCategory = keyof typeof LOW_VISION_LOGMAR;

const NUM = String.raw`(\d+(?:\.\d*)?|\.\d+)`;
const DISTANCE = String.raw`(?:\s*(?:@|at)?\s*\d+(?:\.\d+)?\s*(?:cm|m|metres?|meters?|ft|feet|foot|'|′)?)?`;
const LOW_VISION_PATTERNS: [LowVisionCategory, RegExp][] = [
  ["NLP", /^(?:nlp|npl|no light perception|no perception of light|no pl|no lp)$/],
  ["LP", /^(?:lp|pl|light perception|perception of light)(?:\s*(?:with|w\/)?\s*(?:projection|proj))?$/],
  ["HM", new RegExp(String.raw`^(?:hm|hmm|hand motions?|hand movements?)${DISTANCE}$`)],
  ["CF", new RegExp(String.raw`^(?:cf|fc|counting fingers?|counts? fingers?|finger counting)${DISTANCE}$`)],
];
const LOGMAR_BEFORE = new RegExp(String.raw`^logmar\s*:?\s*([+-]?)${NUM}$`);
const LOGMAR_AFTER = new RegExp(String.raw`^([+-]?)${NUM}\s*logmar$`);
const FRACTION = new RegExp(String.raw`^${NUM}\s*\/\s*${NUM}(?:\s*([+-])\s*(\d+))?$`);
const DECIMAL = new RegExp(String.raw`^${NUM}$`);

function inRange(logMAR: number, text: string): number {
  const value = clean(logMAR);
  if (value < LOGMAR_RANGE.min - 1e-9 || value > LOGMAR_RANGE.max + 1e-9) {
    throw new AcuityError(
      `Acuity ${quote(text)} gives logMAR ${value.toFixed(2)}, outside ${LOGMAR_RANGE.min} to ${LOGMAR_RANGE.max}`,
    );
  }
  return value;
}

/**
 * Converts a written acuity to logMAR.
 *
 * - Snellen fractions in any unit, "20/40", "6/12", "3/60": log10(D/d).
 *   Trailing letters: "20/25-2" adds 0.02 per letter missed, "+2" subtracts
 *   0.02 per extra letter read (Bailey & Lovie 1976 letter scoring).
 * - A bare number is decimal acuity: "0.5" → −log10(0.5) = 0.30.
 * - "0.30 logMAR" or "logMAR 0.3" is already logMAR.
 * - CF, HM, LP, NLP (and spelled-out forms, with or without a distance such
 *   as "CF 1m") get the stand-in values of {@link LOW_VISION_LOGMAR}.
 *
 * The result is exact (20/40 → 0.30103), not snapped to chart lines.
 *
 * @throws AcuityError (a subclass of RxError) on unreadable or implausible input.
 */
export function toLogMAR(acuity: string): number {
  if (typeof acuity !== "string") throw new AcuityError(`Acuity must be text (got ${typeof acuity})`);
  const text = acuity
    .replace(/[\u2212\u2012\u2013\uFE63\uFF0D]/g, "-")
    .toLowerCase()
    .replace(/\./g, (dot, offset: number, whole: string) => (/\d/.test(whole.charAt(offset + 1)) ? dot : ""))
    .replace(/\s+/g, " ")
    .trim();
  if (text === "") throw new AcuityError("Empty acuity");

  for (const [category, pattern] of LOW_VISION_PATTERNS) {
    if (pattern.test(text)) return LOW_VISION_LOGMAR[category].logMAR;
  }

  const labelled = LOGMAR_BEFORE.exec(text) ?? LOGMAR_AFTER.exec(text);
  if (labelled) {
    const value = Number(`${labelled[1] ?? ""}${labelled[2] ?? ""}`);
    return inRange(value, acuity);
  }

  const fraction = FRACTION.exec(text);
  if (fraction) {
    const distance = Number(fraction[1]);
    const size = Number(fraction[2]);
    if (!(distance > 0) || !(size > 0)) {
      throw new AcuityError(`Acuity ${quote(acuity)} has a zero in its fraction`);
    }
    let logMAR = Math.log10(size / distance);
    if (fraction[3] !== undefined && fraction[4] !== undefined) {
      const letters = Number(fraction[4]);
      if (letters > 10) {
        throw new AcuityError(`Acuity ${quote(acuity)} claims ${letters} letters; a chart line has at most 10`);
      }
      logMAR += (fraction[3] === "-" ? 1 : -1) * letters * LOGMAR_PER_LETTER;
    }
    return inRange(logMAR, acuity);
  }

  if (DECIMAL.test(text)) {
    const decimal = Number(text);
    if (!(decimal > 0)) throw new AcuityError(`Decimal acuity ${quote(acuity)} must be greater than 0`);
    return inRange(-Math.log10(decimal), acuity);
  }

  throw new AcuityError(`Unrecognised acuity ${quote(acuity)}`);
}

/** Chart labels for logMAR −0.3 … 1.7 in 0.1 steps (index = 10·logMAR + 3). */
const CHART_LINES = {
  feet: [
    "10", "12.5", "16", "20", "25", "32", "40", "50", "63", "80", "100",
    "125", "160", "200", "250", "320", "400", "500", "630", "800", "1000",
  ],
  metres: [
    "3", "3.8", "4.8", "6", "7.5", "9.5", "12", "15", "19", "24", "30",
    "38", "48", "60", "75", "95", "120", "150", "190", "240", "300",
  ],
  decimal: [
    "2.00", "1.60", "1.25", "1.00", "0.80", "0.63", "0.50", "0.40", "0.32", "0.25", "0.20",
    "0.16", "0.13", "0.10", "0.080", "0.063", "0.050", "0.040", "0.032", "0.025", "0.020",
  ],
} as const;

/** A logMAR within this distance of a 0.1 step is written with that chart line's label. */
const LINE_SNAP = 0.01;

/**
 * Writes a logMAR value in Snellen feet ("20/40"), Snellen metres ("6/12")
 * or decimal ("0.50") notation.
 *
 * Within 0.01 of a 0.1-step chart line (−0.3 … 1.7) the line's standard
 * label is used (20/10 … 20/200 …, 6/3 … 6/60 …; the 0.1 log-step series of
 * the ICO 1984 standard and ISO 8596, labels as commonly printed — common
 * practice). Otherwise the fraction is computed: feet denominators rounded to
 * a whole number, metres to one decimal, decimal to two decimals (two
 * significant figures below 0.10).
 */
export function fromLogMAR(logMAR: number, notation: "feet" | "metres" | "decimal"): string {
  assertFinite(logMAR, "logMAR", "fromLogMAR");
  if (logMAR < LOGMAR_RANGE.min - 1e-9 || logMAR > LOGMAR_RANGE.max + 1e-9) {
    throw new AcuityError(`logMAR ${logMAR} is outside ${LOGMAR_RANGE.min} to ${LOGMAR_RANGE.max}`);
  }
  const labels = CHART_LINES[notation];
  if (!labels) throw new AcuityError(`Unknown acuity notation "${String(notation)}"`);
  const step = Math.round(logMAR * 10);
  const label = Math.abs(logMAR - step / 10) <= LINE_SNAP + 1e-9 ? labels[step + 3] : undefined;
  if (notation === "feet") return `20/${label ?? Math.round(20 * 10 ** logMAR)}`;
  if (notation === "metres") return `6/${label ?? String(Math.round(60 * 10 ** logMAR) / 10)}`;
  if (label) return label;
  const decimal = 10 ** -logMAR;
  return decimal >= 0.1 ? decimal.toFixed(2) : decimal.toPrecision(2);
}
