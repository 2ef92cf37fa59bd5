/**
 * The exam's sections: field names, labels, option lists and the parsing of what the clinician
 * typed. Plain TypeScript shared by the exam page (inline errors as you type) and the server
 * (which refuses a section with any invalid field). Optics come only from the engine.
 */
import { formatRx, parseRx, RxError, toLogMAR, type SphCyl } from "~/lib/optics";
import { parseDecimal } from "~/lib/numbers/decimal";

export const EYES = ["right", "left"] as const;
export type EyeKey = (typeof EYES)[number];
export const EYE_LABEL: Record<EyeKey | "both", string> = { right: "Right (R)", left: "Left (L)", both: "Both eyes" };

export const REFRACTION_KINDS = ["habitual", "autorefraction", "retinoscopy", "subjective", "cycloplegic", "final"] as const;
export type RefractionKind = (typeof REFRACTION_KINDS)[number];
export const REFRACTION_LABEL: Record<RefractionKind, string> = {
  habitual: "Habitual spectacles (lensometry)",
  autorefraction: "Autorefraction",
  retinoscopy: "Retinoscopy",
  subjective: "Subjective",
  cycloplegic: "Cycloplegic",
  final: "Final",
};

export const ACUITY_EYES = ["right", "left", "both"] as const;
export const ACUITY_DISTANCES = ["distance", "near"] as const;
export const ACUITY_CORRECTIONS = ["unaided", "habitual", "best"] as const;
export const ACUITY_CORRECTION_LABEL = { unaided: "Unaided", habitual: "Habitual correction", best: "Best corrected" } as const;

export const PRISM_BASES = ["up", "down", "in", "out"] as const;
export const IOP_METHODS = { goldmann: "Goldmann applanation", non_contact: "Non-contact", rebound: "Rebound", handheld_applanation: "Hand-held applanation", other: "Other" } as const;
export const COLOUR_TESTS = { plates_38: "Pseudoisochromatic plates, 38-plate edition", plates_24: "Pseudoisochromatic plates, 24-plate edition", plates_other: "Other plate test", arrangement: "Arrangement (hue) test", other: "Other" } as const;
export const COLOUR_RESULTS = { normal: "Normal", red_green: "Red-green type", blue_yellow: "Blue-yellow type", inconclusive: "Inconclusive" } as const;
export const FIELD_METHODS = { confrontation: "Confrontation", amsler: "Amsler grid", automated: "Automated threshold (attach the printout)" } as const;
export const RELIABILITY = { good: "Good", fair: "Fair", poor: "Poor" } as const;

/** Structures ticked "normal" on the segment sections (common practice list). */
export const SEGMENT_STRUCTURES = {
  anterior: { lids: "Lids and lashes", conjunctiva: "Conjunctiva", cornea: "Cornea", anterior_chamber: "Anterior chamber", iris: "Iris", lens: "Lens" },
  posterior: { vitreous: "Vitreous", disc: "Optic disc", cup_disc: "Cup/disc ratio", macula: "Macula", vessels: "Vessels", periphery: "Periphery" },
} as const;
export type SegmentKey = keyof typeof SEGMENT_STRUCTURES;

/**
 * A short list of common eye diagnoses with their ICD-10 codes (ICD-10 is an open WHO
 * classification; codes and titles from memory — check against the current edition).
 */
export const DIAGNOSES: readonly { code: string; label: string }[] = [
  { code: "H52.0", label: "Hypermetropia" },
  { code: "H52.1", label: "Myopia" },
  { code: "H52.2", label: "Astigmatism" },
  { code: "H52.3", label: "Anisometropia and aniseikonia" },
  { code: "H52.4", label: "Presbyopia" },
  { code: "H53.0", label: "Amblyopia ex anopsia" },
  { code: "H53.4", label: "Visual field defects" },
  { code: "H53.5", label: "Colour vision deficiencies" },
  { code: "H40.0", label: "Glaucoma suspect" },
  { code: "H04.1", label: "Other disorders of lacrimal gland (dry eye)" },
  { code: "H10.1", label: "Acute atopic conjunctivitis" },
  { code: "H25.9", label: "Senile cataract, unspecified" },
  { code: "H35.3", label: "Degeneration of macula and posterior pole" },
  { code: "H47.1", label: "Papilloedema, unspecified" },
  { code: "H50.0", label: "Convergent concomitant strabismus" },
  { code: "H51.1", label: "Convergence insufficiency and excess" },
];

export type FieldErrors = Record<string, string[]>;
export type Parsed<T> = { ok: true; value: T } | { ok: false; errors: FieldErrors };

const messageOf = (e: unknown) => (e instanceof RxError ? e.message : e instanceof Error ? e.message : String(e));

/** Optional number within [min, max], in steps of `step` when given. */
export function parseNumber(text: string | undefined, label: string, min: number, max: number, opts: { step?: number; integer?: boolean } = {}): { value: number | null; error?: string } {
  const t = (text ?? "").trim().replace(/\u2212/g, "-");
  if (!t) return { value: null };
  const n = parseDecimal(t);
  if (n === null) return { value: null, error: `${label}: "${t}" is not a decimal number (write it like 12 or 1.5).` };
  if (n < min || n > max) return { value: null, error: `${label}: ${n} is outside ${min} to ${max}.` };
  if (opts.integer && !Number.isInteger(n)) return { value: null, error: `${label}: use a whole number.` };
  if (opts.step && Math.abs(n / opts.step - Math.round(n / opts.step)) > 1e-9) return { value: null, error: `${label}: use steps of ${opts.step.toFixed(2)}.` };
  return { value: n };
}

export function parseAcuity(text: string | undefined, label: string): { value: { notation: string; logMar: number } | null; error?: string } {
  const t = (text ?? "").trim();
  if (!t) return { value: null };
  try {
    return { value: { notation: t, logMar: Math.round(toLogMAR(t) * 1000) / 1000 } };
  } catch (e) {
    return { value: null, error: `${label}: ${messageOf(e)}` };
  }
}

export function parseRxText(text: string | undefined, label: string): { value: SphCyl | null; error?: string } {
  const t = (text ?? "").trim();
  if (!t) return { value: null };
  try {
    return { value: parseRx(t) };
  } catch (e) {
    return { value: null, error: `${label}: ${messageOf(e)}` };
  }
}

export type RefractionEye = {
  rawText: string;
  rx: SphCyl;
  addPower: number | null;
  prismDioptres: number | null;
  prismBase: (typeof PRISM_BASES)[number] | null;
  vertexMm: number | null;
  va: { notation: string; logMar: number } | null;
};

export const refractionField = (eye: EyeKey, part: "rx" | "add" | "prism" | "base" | "vertex" | "va") => `${eye}_${part}`;
const EYE_SHORT: Record<EyeKey, string> = { right: "Right", left: "Left" };

/** One eye's row of a refraction section; `null` when the row is left blank. */
export function parseRefractionEye(form: Record<string, string | undefined>, eye: EyeKey, kindLabel: string): Parsed<RefractionEye | null> {
  const f = (p: Parameters<typeof refractionField>[1]) => form[refractionField(eye, p)]?.trim() ?? "";
  const errors: FieldErrors = {};
  const where = `${EYE_SHORT[eye]} ${kindLabel.toLowerCase()}`;
  const rxText = f("rx");
  const anyOther = ["add", "prism", "base", "vertex", "va"].some((p) => f(p as "add"));
  if (!rxText && !anyOther) return { ok: true, value: null };
  const rx = parseRxText(rxText, `${where} sphere/cylinder/axis`);
  if (!rxText) errors[refractionField(eye, "rx")] = [`${where}: type the sphere, cylinder and axis (for example -2.25 -0.75 x 175, or pl).`];
  else if (rx.error) errors[refractionField(eye, "rx")] = [rx.error];
  const add = parseNumber(f("add"), `${where} add`, 0.25, 4, { step: 0.25 });
  if (add.error) errors[refractionField(eye, "add")] = [add.error];
  const prism = parseNumber(f("prism"), `${where} prism`, 0.25, 20, { step: 0.25 });
  if (prism.error) errors[refractionField(eye, "prism")] = [prism.error];
  const base = f("base");
  if (base && !(PRISM_BASES as readonly string[]).includes(base)) errors[refractionField(eye, "base")] = [`${where} base: choose up, down, in or out.`];
  if (prism.value !== null && !base) errors[refractionField(eye, "base")] = [`${where}: give the base direction of the prism.`];
  if (prism.value === null && base && !prism.error) errors[refractionField(eye, "prism")] = [`${where}: give the prism in Δ, or clear the base.`];
  const vertex = parseNumber(f("vertex"), `${where} vertex distance (mm)`, 0, 25, { step: 0.5 });
  if (vertex.error) errors[refractionField(eye, "vertex")] = [vertex.error];
  const va = parseAcuity(f("va"), `${where} VA`);
  if (va.error) errors[refractionField(eye, "va")] = [va.error];
  if (Object.keys(errors).length || !rx.value) return { ok: false, errors };
  return {
    ok: true,
    value: {
      rawText: rxText,
      rx: rx.value,
      addPower: add.value,
      prismDioptres: prism.value,
      prismBase: (base || null) as RefractionEye["prismBase"],
      vertexMm: vertex.value,
      va: va.value,
    },
  };
}

/** "-2.25 / -0.75 × 175" style text of a stored row. */
export function rxText(rx: SphCyl) {
  return formatRx(rx);
}

export const acuityField = (eye: string, distance: string, correction: string) => `va_${eye}_${distance}_${correction}`;

/** Printed on every prescription and beside the issue form. */
export const RX_CAUTIONS = [
  "Check every value against the signed exam before ordering lenses.",
  "Contact-lens powers are converted from the spectacle plane to the cornea (effective power, F/(1 - dF)) and rounded to 0.25 D steps; both values are shown. Check them before ordering.",
  "Validity is the practice's setting; local law and licensed practice govern prescriptions.",
] as const;
