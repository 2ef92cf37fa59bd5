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
    source: "Schulze-Bonsel et al. 2006 (as for CF): HM ≈ decimal 0.005, i.e. logMAR −log10(0.005) = 2.30",
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
    "10",
    "12.5",
    "16",
    "20",
    "25",
    "32",
    "40",
    "50",
    "63",
    "80",
    "100",
    "125",
    "160",
    "200",
    "250",
    "320",
    "400",
    "500",
    "630",
    "800",
    "1000",
  ],
  metres: [
    "3",
    "3.8",
    "4.8",
    "6",
    "7.5",
    "9.5",
    "12",
    "15",
    "19",
    "24",
    "30",
    "38",
    "48",
    "60",
    "75",
    "95",
    "120",
    "150",
    "190",
    "240",
    "300",
  ],
  decimal: [
    "2.00",
    "1.60",
    "1.25",
    "1.00",
    "0.80",
    "0.63",
    "0.50",
    "0.40",
    "0.32",
    "0.25",
    "0.20",
    "0.16",
    "0.13",
    "0.10",
    "0.080",
    "0.063",
    "0.050",
    "0.040",
    "0.032",
    "0.025",
    "0.020",
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

// ------------------------------------------------------------ reading typed acuity

/** How a practice writes acuity: Snellen in metres (6/6), Snellen in feet (20/20), decimal (1.0) or logMAR (0.00). */
export const ACUITY_NOTATIONS = ["metric", "feet", "decimal", "logmar"] as const;
export type AcuityNotation = (typeof ACUITY_NOTATIONS)[number];
export const ACUITY_NOTATION_LABEL: Record<AcuityNotation, string> = {
  metric: "Snellen, metres (6/6)",
  feet: "Snellen, feet (20/20)",
  decimal: "Decimal (1.0)",
  logmar: "logMAR (0.00)",
};

/** What {@link readAcuity} read. */
export type AcuityRead = {
  ok: true;
  /** logMAR, rounded to 0.01 (a letter is 0.02). */
  logMAR: number;
  /** Unambiguous text to store and show: "6/9-2", "logMAR 1.00", "decimal 0.50", "N8", "0.80M", "CF 1m", "PH 6/9". */
  display: string;
  /** What was read, for the clinician to confirm before saving: "reads as 6/60, logMAR 1.00". */
  echo: string;
  kind: "chart" | "low_vision";
  pinhole: boolean;
  /** Letters missed on the line (negative: letters read on the next line). */
  lettersMissed: number;
};
export type AcuityReadError = { ok: false; error: string };
export type AcuityReadOptions = {
  /** The practice's notation; decides what a bare number means. Null or absent: a bare number is refused. */
  notation?: AcuityNotation | null;
  distance: "distance" | "near";
  /** Near test distance in centimetres (default 40). */
  nearDistanceCm?: number;
};

/** Chart acuities outside this logMAR range are refused: better than 6/3 is not measured, worse than 1/60 is recorded as CF/HM/LP/NLP. */
export const CHART_LOGMAR_RANGE = { min: -0.3, max: 1.8 } as const;
/** Most letters that may be recorded as missed (or gained) on a line; a logMAR line has five letters (Bailey & Lovie 1976). */
export const MAX_LETTERS = 4;
/**
 * N-point print size to M units: N = 8 × M (N8 ≈ 1.0M, N6 ≈ 0.8M, N3 ≈ 0.4M), as in the usual
 * near-acuity equivalence tables at 40 cm (6/15 = 1M = N8; 6/6 = 0.4M = N3) — common practice.
 */
export const N_POINTS_PER_M = 8;

const round2 = (x: number) => {
  const r = Math.round(x * 100) / 100;
  return r === 0 ? 0 : r;
};
const f2 = (x: number) => round2(x).toFixed(2);
const fail = (error: string): AcuityReadError => ({ ok: false, error });
const NUMBER = String.raw`(\d+(?:\.\d+)?|\.\d+)`;
const SIGNED = String.raw`([+-]?(?:\d+(?:\.\d+)?|\.\d+))`;

/**
 * Reads a typed acuity in the practice's notation and says what it read, or refuses it with a
 * message. A Snellen fraction is the same in any notation (6/12, 20/40, 3/60; "-2"/"+1" count
 * letters at 0.02 logMAR each). A bare number is decimal or logMAR only when the practice's
 * notation says which: "1.0" is 6/6 in decimal but 6/60 in logMAR, so without that it is refused.
 * A unit typed with the number ("1.0 logMAR", "decimal 0.5") always wins. CF/HM/LP/NLP get the
 * stand-in values of {@link LOW_VISION_LOGMAR}. "PH" before or after marks pinhole acuity.
 * Near acuity is read in N-point print sizes (N8) or M units (1.0M) at the test distance.
 */
export function readAcuity(text: string, options: AcuityReadOptions): AcuityRead | AcuityReadError {
  if (typeof text !== "string") return fail("Type the acuity as text.");
  const notation = options.notation ?? null;
  if (notation !== null && !(ACUITY_NOTATIONS as readonly string[]).includes(notation))
    return fail(`Unknown acuity notation "${String(notation)}".`);
  const near = options.distance === "near";
  const cm = options.nearDistanceCm ?? 40;
  if (!Number.isFinite(cm) || cm < 10 || cm > 100)
    return fail(`Near test distance ${String(cm)} cm is outside 10–100 cm.`);

  let t = text
    .replace(/[\u2212\u2012\u2013\uFE63\uFF0D]/g, "-")
    .toLowerCase()
    .replace(/\s+/g, " ")
    .trim();
  if (!t) return fail("Empty acuity.");
  let pinhole = false;
  const ph = /^(?:ph|pinhole)\s*:?\s*(.+)$/.exec(t) ?? /^(.+?)\s*\(?\s*(?:ph|pinhole)\s*\)?$/.exec(t);
  if (ph) {
    pinhole = true;
    t = ph[1]!.trim();
  }
  const done = (
    logMAR: number,
    display: string,
    what: string,
    kind: AcuityRead["kind"] = "chart",
    lettersMissed = 0,
  ): AcuityRead | AcuityReadError => {
    const v = round2(logMAR);
    if (kind === "chart" && (v < CHART_LOGMAR_RANGE.min - 1e-9 || v > CHART_LOGMAR_RANGE.max + 1e-9)) {
      return fail(
        v < CHART_LOGMAR_RANGE.min
          ? `"${text.trim()}" reads as logMAR ${f2(v)}, better than ${f2(CHART_LOGMAR_RANGE.min)} (6/3), which charts do not measure. Check the value and its notation.`
          : `"${text.trim()}" reads as logMAR ${f2(v)}, worse than ${f2(CHART_LOGMAR_RANGE.max)} (about 1/60). Check the value, or record CF, HM, LP or NLP.`,
      );
    }
    return {
      ok: true,
      logMAR: v,
      display: pinhole ? `PH ${display}` : display,
      echo: `${pinhole ? "pinhole, " : ""}reads as ${what}`,
      kind,
      pinhole,
      lettersMissed,
    };
  };

  // Hex, exponents and the like are not acuities.
  if (/0x|\d\s*e\s*[+-]?\d|infinity|nan/.test(t))
    return fail(
      `"${text.trim()}" is not an acuity: type a chart value such as 6/9, 20/30, 0.66 decimal or 0.18 logMAR.`,
    );

  // Counting fingers, hand movements, light perception.
  for (const [category, pattern] of LOW_VISION_PATTERNS) {
    if (!pattern.test(t.replace(/\./g, (dot, i: number, whole: string) => (/\d/.test(whole.charAt(i + 1)) ? dot : ""))))
      continue;
    if (near)
      return fail(`${LOW_VISION_LOGMAR[category].label} is a distance finding; record it in the distance acuity.`);
    const at = /(\d+(?:\.\d+)?)\s*(cm|m|metres?|meters?|ft|feet|foot|'|′)/.exec(t);
    const unit = at ? (at[2]!.startsWith("c") ? "cm" : /^(m|met)/.test(at[2]!) ? "m" : "ft") : "";
    const display = `${category}${at ? ` ${at[1]}${unit}` : ""}`;
    const lv = LOW_VISION_LOGMAR[category];
    return done(
      lv.logMAR,
      display,
      `${lv.label}${at ? ` at ${at[1]} ${unit}` : ""}, recorded as logMAR ${f2(lv.logMAR)} (a stand-in value, not a chart measurement)`,
      "low_vision",
    );
  }

  // A unit typed with the number.
  const logmar = new RegExp(String.raw`^(?:logmar\s*:?\s*${SIGNED}|${SIGNED}\s*logmar)$`).exec(t);
  if (logmar) {
    const v = Number(logmar[1] ?? logmar[2]);
    return done(v, `logMAR ${f2(v)}`, `logMAR ${f2(v)} (${equivalent(v)})`);
  }
  const dec = new RegExp(String.raw`^(?:dec(?:imal)?\s*:?\s*${NUMBER}|${NUMBER}\s*dec(?:imal)?)$`).exec(t);
  if (dec) return readDecimal(Number(dec[1] ?? dec[2]), text, done);

  // Near print sizes.
  const npoint = new RegExp(String.raw`^n\s*${NUMBER}$`).exec(t);
  const munits = new RegExp(String.raw`^(?:m\s*${NUMBER}|${NUMBER}\s*m)$`).exec(t);
  if (npoint || munits) {
    if (!near) return fail(`"${text.trim()}" is a near print size; record it in the near acuity.`);
    const m = npoint ? Number(npoint[1]) / N_POINTS_PER_M : Number(munits![1] ?? munits![2]);
    if (npoint && !(Number(npoint[1]) >= 3 && Number(npoint[1]) <= 80))
      return fail(`N${npoint[1]} is outside the N3–N80 print sizes of near charts.`);
    if (munits && !(m >= 0.3 && m <= 10))
      return fail(`${munits[1] ?? munits[2]}M is outside the 0.3M–10M print sizes of near charts.`);
    const v = Math.log10(m / (cm / 100));
    const display = npoint ? `N${Number(npoint[1])}` : `${m.toFixed(2)}M`;
    return done(
      v,
      display,
      `${display} at ${cm} cm${npoint ? ` (${m.toFixed(2)}M)` : ""}, logMAR ${f2(v)} (${equivalent(v)})`,
    );
  }

  // Snellen fractions, with letters missed or gained.
  const frac = new RegExp(String.raw`^${NUMBER}\s*\/\s*${NUMBER}(?:\s*([+-])\s*(\d+))?$`).exec(t);
  if (frac) {
    const d = Number(frac[1]);
    const size = Number(frac[2]);
    if (!(d > 0) || !(size > 0)) return fail(`"${text.trim()}" has a zero in its fraction.`);
    if (d > 20)
      return fail(
        `"${text.trim()}": the test distance ${d} is not a chart distance (6 m, 20 ft, or a shorter one such as 3/60).`,
      );
    let letters = 0;
    if (frac[3] && frac[4]) {
      letters = Number(frac[4]) * (frac[3] === "-" ? 1 : -1);
      if (Math.abs(letters) < 1 || Math.abs(letters) > MAX_LETTERS) {
        return fail(
          `"${text.trim()}": record 1 to ${MAX_LETTERS} letters missed or gained; with more, record the line above or below.`,
        );
      }
    }
    const v = Math.log10(size / d) + letters * LOGMAR_PER_LETTER;
    const base = `${frac[1]}/${frac[2]}`;
    const display = letters ? `${base}${letters > 0 ? "-" : "+"}${Math.abs(letters)}` : base;
    const letterWords = letters
      ? ` ${letters > 0 ? "−" : "+"}${Math.abs(letters)} letter${Math.abs(letters) === 1 ? "" : "s"}`
      : "";
    const unitWords = d === 20 ? ` (${fromLogMAR(clampForLabel(Math.log10(size / d)), "metres")})` : "";
    return done(v, display, `${base}${letterWords}${unitWords}, logMAR ${f2(v)}`, "chart", letters);
  }

  // A bare number: its meaning depends on the notation.
  const bare = new RegExp(String.raw`^${SIGNED}$`).exec(t);
  if (bare) {
    const v = Number(bare[1]);
    if (notation === "logmar") return done(v, `logMAR ${f2(v)}`, `logMAR ${f2(v)} (${equivalent(v)})`);
    if (notation === "decimal") return readDecimal(v, text, done);
    if (Number.isInteger(v) && v >= 3) {
      return fail(
        `"${text.trim()}" looks like the bottom of a Snellen fraction: type the whole fraction (${notation === "feet" ? `20/${v}` : `6/${v}`}).`,
      );
    }
    const asDecimal = v > 0 ? ` as decimal it would be ${equivalentSafe(-Math.log10(v))},` : "";
    const asLogmar =
      v >= CHART_LOGMAR_RANGE.min && v <= CHART_LOGMAR_RANGE.max ? ` as logMAR ${equivalentSafe(v)},` : "";
    return fail(
      `"${text.trim()}" cannot be read unambiguously:${asDecimal}${asLogmar} ` +
        `so type a Snellen fraction (${notation === "feet" ? "20/20" : "6/6"}) or add the unit ("${bare[1]} decimal" or "${bare[1]} logMAR").`,
    );
  }
  return fail(
    `"${text.trim()}" is not a recognised acuity: type ${near ? "N8, 1.0M, " : ""}6/9, 20/30, "0.66 decimal", "0.18 logMAR", CF, HM, LP or NLP.`,
  );
}

function readDecimal(
  v: number,
  text: string,
  done: (l: number, d: string, w: string) => AcuityRead | AcuityReadError,
): AcuityRead | AcuityReadError {
  if (!(v > 0))
    return fail(`Decimal acuity "${text.trim()}" must be greater than 0; for logMAR 0.0 type "0.0 logMAR".`);
  if (v > 2)
    return fail(
      `"${text.trim()}" is not a decimal acuity (0.02 to 2.0); for a Snellen value type the fraction, for example 6/${text.trim()}.`,
    );
  const l = -Math.log10(v);
  return done(l, `decimal ${v.toFixed(2)}`, `decimal ${v.toFixed(2)} (${equivalent(l)}), logMAR ${f2(l)}`);
}

const clampForLabel = (l: number) => Math.min(LOGMAR_RANGE.max, Math.max(LOGMAR_RANGE.min, l));
/** "6/60" — the metric Snellen line of a logMAR value. */
function equivalent(logMAR: number): string {
  return fromLogMAR(clampForLabel(round2(logMAR)), "metres");
}
function equivalentSafe(logMAR: number): string {
  return logMAR < LOGMAR_RANGE.min || logMAR > LOGMAR_RANGE.max ? "off the chart" : equivalent(logMAR);
}
