/**
 * The exam's sections: field names, labels, option lists and the parsing of what the clinician
 * typed. Plain TypeScript shared by the exam page (inline errors as you type) and the server
 * (which refuses a section with any invalid field). Optics come only from the engine.
 */
import { formatRx, parseRx, readAcuity, RxError, type AcuityNotation, type SphCyl } from "~/lib/optics";
import { localParts, wallTimeToInstant } from "~/lib/scheduling/time";
import { parseDecimal } from "~/lib/numbers/decimal";

export const EYES = ["right", "left"] as const;
export type EyeKey = (typeof EYES)[number];
export const EYE_LABEL: Record<EyeKey | "both", string> = { right: "Right (R)", left: "Left (L)", both: "Both eyes" };

export const REFRACTION_KINDS = [
  "habitual",
  "autorefraction",
  "retinoscopy",
  "subjective",
  "cycloplegic",
  "final",
] as const;
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
export const ACUITY_CORRECTIONS = ["unaided", "habitual", "best", "pinhole"] as const;
export const ACUITY_CORRECTION_LABEL = {
  unaided: "Unaided",
  habitual: "Habitual correction",
  best: "Best corrected",
  pinhole: "Pinhole",
} as const;

export const PRISM_BASES = ["up", "down", "in", "out"] as const;
export const IOP_METHODS = {
  goldmann: "Goldmann applanation",
  non_contact: "Non-contact",
  rebound: "Rebound",
  handheld_applanation: "Hand-held applanation",
  other: "Other",
} as const;
export const COLOUR_TESTS = {
  plates_38: "Pseudoisochromatic plates, 38-plate edition",
  plates_24: "Pseudoisochromatic plates, 24-plate edition",
  plates_other: "Other plate test",
  arrangement: "Arrangement (hue) test",
  other: "Other",
} as const;
export const COLOUR_RESULTS = {
  normal: "Normal",
  red_green: "Red-green type",
  blue_yellow: "Blue-yellow type",
  inconclusive: "Inconclusive",
} as const;
export const FIELD_METHODS = {
  confrontation: "Confrontation",
  amsler: "Amsler grid",
  automated: "Automated threshold (attach the printout)",
} as const;
export const RELIABILITY = { good: "Good", fair: "Fair", poor: "Poor" } as const;

/** Structures ticked "normal" on the segment sections (common practice list). */
export const SEGMENT_STRUCTURES = {
  anterior: {
    lids: "Lids and lashes",
    conjunctiva: "Conjunctiva",
    cornea: "Cornea",
    anterior_chamber: "Anterior chamber",
    iris: "Iris",
    lens: "Lens",
  },
  posterior: {
    vitreous: "Vitreous",
    disc: "Optic disc",
    cup_disc: "Cup/disc ratio",
    macula: "Macula",
    vessels: "Vessels",
    periphery: "Periphery",
  },
} as const;
export type SegmentKey = keyof typeof SEGMENT_STRUCTURES;

/**
 * Eye diagnoses with their ICD-10 codes and titles (ICD-10 is the WHO's open classification).
 * Titles marked `checked` were compared with the WHO ICD-10 chapter VII titles as listed by
 * OpenCodelists (opencodelists.org, "ICD-10 Chapter VII"); the others are from memory — check
 * them against the current edition. Each diagnosis is recorded for the right eye, the left eye or
 * both.
 */
export const DIAGNOSES: readonly { code: string; label: string; group: string }[] = [
  { code: "Z01.0", label: "Examination of eyes and vision", group: "Routine" }, // from memory
  { code: "H52.0", label: "Hypermetropia", group: "Refraction and binocular vision" }, // from memory
  { code: "H52.1", label: "Myopia", group: "Refraction and binocular vision" }, // from memory
  { code: "H52.2", label: "Astigmatism", group: "Refraction and binocular vision" }, // from memory
  { code: "H52.3", label: "Anisometropia and aniseikonia", group: "Refraction and binocular vision" }, // from memory
  { code: "H52.4", label: "Presbyopia", group: "Refraction and binocular vision" }, // from memory
  { code: "H53.0", label: "Amblyopia ex anopsia", group: "Refraction and binocular vision" }, // from memory
  { code: "H50.0", label: "Convergent concomitant strabismus", group: "Refraction and binocular vision" }, // from memory
  { code: "H51.1", label: "Convergence insufficiency and excess", group: "Refraction and binocular vision" }, // from memory
  { code: "H53.2", label: "Diplopia", group: "Refraction and binocular vision" }, // from memory
  { code: "H01.0", label: "Blepharitis", group: "Lids, tears and cornea" }, // checked
  { code: "H02.4", label: "Ptosis of eyelid", group: "Lids, tears and cornea" }, // checked
  {
    code: "H04.1",
    label: "Other disorders of lacrimal gland (includes dry eye syndrome)",
    group: "Lids, tears and cornea",
  }, // checked (inclusion from memory)
  { code: "H10.9", label: "Conjunctivitis, unspecified", group: "Lids, tears and cornea" }, // from memory
  { code: "H11.0", label: "Pterygium", group: "Lids, tears and cornea" }, // from memory
  { code: "H18.6", label: "Keratoconus", group: "Lids, tears and cornea" }, // from memory
  { code: "H20.0", label: "Acute and subacute iridocyclitis", group: "Lids, tears and cornea" }, // from memory
  { code: "H25.9", label: "Senile cataract, unspecified", group: "Lens" }, // from memory
  { code: "H26.9", label: "Cataract, unspecified", group: "Lens" }, // from memory
  { code: "Z96.1", label: "Presence of intraocular lens (pseudophakia)", group: "Lens" }, // from memory
  { code: "H40.0", label: "Glaucoma suspect (includes ocular hypertension)", group: "Glaucoma" }, // from memory
  { code: "H40.1", label: "Primary open-angle glaucoma", group: "Glaucoma" }, // from memory
  { code: "H40.2", label: "Primary angle-closure glaucoma", group: "Glaucoma" }, // from memory
  {
    code: "H35.3",
    label: "Degeneration of macula and posterior pole (age-related macular degeneration)",
    group: "Retina and vitreous",
  }, // from memory
  { code: "H36.0", label: "Diabetic retinopathy", group: "Retina and vitreous" }, // from memory
  {
    code: "H43.8",
    label: "Other disorders of vitreous body (includes vitreous detachment)",
    group: "Retina and vitreous",
  }, // from memory
  { code: "H33.0", label: "Retinal detachment with retinal break", group: "Retina and vitreous" }, // from memory
  { code: "H33.3", label: "Retinal breaks without detachment", group: "Retina and vitreous" }, // from memory
  { code: "H34.1", label: "Central retinal artery occlusion", group: "Retina and vitreous" }, // from memory
  { code: "H34.8", label: "Other retinal vascular occlusions", group: "Retina and vitreous" }, // from memory
  { code: "H47.1", label: "Papilloedema, unspecified", group: "Optic nerve and visual pathway" }, // from memory
  { code: "H47.2", label: "Optic atrophy", group: "Optic nerve and visual pathway" }, // from memory
  { code: "H53.4", label: "Visual field defects", group: "Optic nerve and visual pathway" }, // from memory
  { code: "H53.5", label: "Colour vision deficiencies", group: "Optic nerve and visual pathway" }, // from memory
  { code: "M31.6", label: "Other giant cell arteritis", group: "Optic nerve and visual pathway" }, // from memory
];
export const diagnosisField = (code: string) => `dx_${code}`;

export type FieldErrors = Record<string, string[]>;
export type Parsed<T> = { ok: true; value: T } | { ok: false; errors: FieldErrors };

const messageOf = (e: unknown) => (e instanceof RxError ? e.message : e instanceof Error ? e.message : String(e));

/** Optional number within [min, max], in steps of `step` when given. */
export function parseNumber(
  text: string | undefined,
  label: string,
  min: number,
  max: number,
  opts: { step?: number; integer?: boolean } = {},
): { value: number | null; error?: string } {
  const t = (text ?? "").trim().replace(/\u2212/g, "-");
  if (!t) return { value: null };
  if (/^[+-]?\d+,\d+$/.test(t)) return { value: null, error: `${label}: "${t}" — use a decimal point, not a comma.` };
  const n = parseDecimal(t);
  if (n === null)
    return { value: null, error: `${label}: "${t}" is not a number (type digits with an optional decimal point).` };
  if (n < min || n > max) return { value: null, error: `${label}: ${n} is outside ${min} to ${max}.` };
  if (opts.integer && !Number.isInteger(n)) return { value: null, error: `${label}: use a whole number.` };
  if (opts.step && Math.abs(n / opts.step - Math.round(n / opts.step)) > 1e-9)
    return { value: null, error: `${label}: use steps of ${opts.step.toFixed(2)}.` };
  return { value: n };
}

export const ACUITY_SCALES = ["metric", "feet", "decimal", "logmar", "n_point", "m_units", "low_vision"] as const;
export type AcuityScale = (typeof ACUITY_SCALES)[number];
export type AcuityValue = { notation: string; logMar: number; scale: AcuityScale; echo: string; pinhole: boolean };
export type AcuityOptions = { notation?: AcuityNotation | null; distance?: "distance" | "near" };

/** The scale a value was read in, from the engine's canonical text. */
function scaleOf(display: string, kind: "chart" | "low_vision"): AcuityScale {
  const d = display.replace(/^PH\s+/, "");
  if (kind === "low_vision") return "low_vision";
  if (/^N\s?\d/.test(d)) return "n_point";
  if (/M$/.test(d)) return "m_units";
  if (/^logMAR/i.test(d)) return "logmar";
  if (/^decimal/i.test(d)) return "decimal";
  if (/^20\//.test(d)) return "feet";
  return "metric";
}

/**
 * One acuity as typed, read by the optics engine in the practice's notation (a bare "1.0" is
 * refused unless the notation says decimal or logMAR). Stored as the engine's canonical text.
 */
export function parseAcuity(
  text: string | undefined,
  label: string,
  opts: AcuityOptions = {},
): { value: AcuityValue | null; error?: string } {
  const t = (text ?? "").trim();
  if (!t) return { value: null };
  const r = readAcuity(t, { notation: opts.notation ?? null, distance: opts.distance ?? "distance" });
  if (!r.ok) return { value: null, error: `${label}: ${r.error}` };
  return {
    value: {
      notation: r.display,
      logMar: r.logMAR,
      scale: scaleOf(r.display, r.kind),
      echo: r.echo,
      pinhole: r.pinhole,
    },
  };
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
  va: AcuityValue | null;
};

export const refractionField = (eye: EyeKey, part: "rx" | "add" | "prism" | "base" | "vertex" | "va") =>
  `${eye}_${part}`;
const EYE_SHORT: Record<EyeKey, string> = { right: "Right", left: "Left" };

/** One eye's row of a refraction section; `null` when the row is left blank. */
export function parseRefractionEye(
  form: Record<string, string | undefined>,
  eye: EyeKey,
  kindLabel: string,
  notation: AcuityNotation | null = null,
): Parsed<RefractionEye | null> {
  const f = (p: Parameters<typeof refractionField>[1]) => form[refractionField(eye, p)]?.trim() ?? "";
  const errors: FieldErrors = {};
  const where = `${EYE_SHORT[eye]} ${kindLabel.toLowerCase()}`;
  const rxText = f("rx");
  const anyOther = ["add", "prism", "base", "vertex", "va"].some((p) => f(p as "add"));
  if (!rxText && !anyOther) return { ok: true, value: null };
  const rx = parseRxText(rxText, `${where} sphere/cylinder/axis`);
  const axisTyped = /(?:×|\bx|\bax\.?|\baxis)\s*(\d+(?:\.\d+)?)\s*$/i.exec(rxText);
  if (!rxText)
    errors[refractionField(eye, "rx")] = [
      `${where}: type the sphere, cylinder and axis (for example -2.25 -0.75 x 175, or pl).`,
    ];
  else if (rx.error) errors[refractionField(eye, "rx")] = [rx.error];
  // Axes are written 1 to 180 (common practice); a typed 0 is refused rather than silently read as 180.
  else if (axisTyped && Number(axisTyped[1]) === 0)
    errors[refractionField(eye, "rx")] = [
      `${where} sphere/cylinder/axis: axis 0 is not used; axes run from 1 to 180 (write 180).`,
    ];
  const add = parseNumber(f("add"), `${where} add`, 0.25, 4, { step: 0.25 });
  if (add.error) errors[refractionField(eye, "add")] = [add.error];
  const prism = parseNumber(f("prism"), `${where} prism`, 0.25, 20, { step: 0.25 });
  if (prism.error) errors[refractionField(eye, "prism")] = [prism.error];
  const base = f("base");
  if (base && !(PRISM_BASES as readonly string[]).includes(base))
    errors[refractionField(eye, "base")] = [`${where} base: choose up, down, in or out.`];
  if (prism.value !== null && !base)
    errors[refractionField(eye, "base")] = [`${where}: give the base direction of the prism.`];
  if (prism.value === null && base && !prism.error)
    errors[refractionField(eye, "prism")] = [`${where}: give the prism in Δ, or clear the base.`];
  const vertex = parseNumber(f("vertex"), `${where} vertex distance (mm)`, 0, 25, { step: 0.5 });
  if (vertex.error) errors[refractionField(eye, "vertex")] = [vertex.error];
  const va = parseAcuity(f("va"), `${where} VA`, { notation, distance: "distance" });
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
/** Cautions printed on every prescription. */
const COMMON_RX_CAUTIONS = [
  "Check every value against the signed exam before ordering lenses.",
  "Validity is the practice's setting; local law and licensed practice govern prescriptions.",
] as const;
/** Cautions that concern contact lenses: printed only on contact-lens prescriptions (common practice wording). */
export const CONTACT_LENS_RX_CAUTIONS = [
  "The powers are those of the lens fitted, in the steps it is made in; a spectacle prescription cannot be used to order contact lenses, and this one cannot be used for any other lens.",
  "Wear and replace the lenses only as advised; do not sleep, swim or shower in them unless advised, and never rinse or store them in tap water.",
  "Remove the lenses and seek advice the same day if an eye becomes red or painful, or vision blurs.",
  "Keep up aftercare visits: the prescription expires on the date shown.",
] as const;
/** The cautions printed on a prescription of this kind. */
export const rxCautions = (kind: "spectacle" | "contact_lens"): readonly string[] =>
  kind === "contact_lens" ? [...COMMON_RX_CAUTIONS, ...CONTACT_LENS_RX_CAUTIONS] : COMMON_RX_CAUTIONS;

// ------------------------------------------------------------------ clinical findings

type Form = Record<string, string | undefined>;
const SIDE: Record<EyeKey, string> = { right: "Right", left: "Left" };
const ticked = (form: Form, k: string) => form[k] === "on";
const textOf = (form: Form, k: string, max = 2000) => (form[k] ?? "").trim().slice(0, max);

function choice<T extends string>(
  form: Form,
  k: string,
  options: readonly T[],
  label: string,
  errors: FieldErrors,
): T | null {
  const v = (form[k] ?? "").trim();
  if (!v) return null;
  if (!(options as readonly string[]).includes(v)) {
    errors[k] = [`${label}: choose one of the listed options.`];
    return null;
  }
  return v as T;
}
const done = <T>(errors: FieldErrors, value: T): Parsed<T> =>
  Object.keys(errors).length ? { ok: false, errors } : { ok: true, value };

/** Red-flag symptoms asked about at every visit; per-eye ones record which eye. */
export const RED_FLAGS = {
  flashes: "Flashes of light",
  newFloaters: "New floaters",
  curtain: "Curtain or shadow over the vision",
  suddenLoss: "Sudden loss of vision",
  severePain: "Eye pain",
  redEye: "Red eye",
  distortion: "New distortion (straight lines look bent)",
} as const;
export type RedFlagKey = keyof typeof RED_FLAGS;
export const RED_FLAG_EYES = { right: "Right eye", left: "Left eye", both: "Both eyes" } as const;
export const redFlagField = (k: RedFlagKey) => `rf_${k}`;
export type RedFlags = Record<RedFlagKey, "right" | "left" | "both" | null> & {
  newDiplopia: boolean;
  gcaSymptoms: boolean;
  headache: boolean;
  notes: string;
};

export function parseRedFlags(form: Form): Parsed<RedFlags> {
  const errors: FieldErrors = {};
  const out = {
    newDiplopia: ticked(form, "rf_newDiplopia"),
    gcaSymptoms: ticked(form, "rf_gcaSymptoms"),
    headache: ticked(form, "rf_headache"),
    notes: textOf(form, "rf_notes", 4000),
  } as RedFlags;
  for (const k of Object.keys(RED_FLAGS) as RedFlagKey[])
    out[k] = choice(form, redFlagField(k), ["right", "left", "both"] as const, RED_FLAGS[k], errors);
  return done(errors, out);
}

export type PupilsEye = {
  equalReactive: boolean;
  rapd: boolean;
  larger: boolean;
  sizeMm: number | null;
  notes: string;
};
export const pupilField = (eye: EyeKey, part: "equal" | "rapd" | "larger" | "size" | "notes") => `${eye}_pup_${part}`;

/** Pupils per eye; contradictions between the eyes (a defect or the larger pupil in both) are refused. */
export function parsePupils(form: Form): Parsed<Partial<Record<EyeKey, PupilsEye>>> {
  const errors: FieldErrors = {};
  const out: Partial<Record<EyeKey, PupilsEye>> = {};
  for (const eye of EYES) {
    const E = SIDE[eye];
    const size = parseNumber(form[pupilField(eye, "size")], `${E} pupil size (mm)`, 1, 10, { step: 0.5 });
    if (size.error) errors[pupilField(eye, "size")] = [size.error];
    const row: PupilsEye = {
      equalReactive: ticked(form, pupilField(eye, "equal")),
      rapd: ticked(form, pupilField(eye, "rapd")),
      larger: ticked(form, pupilField(eye, "larger")),
      sizeMm: size.value,
      notes: textOf(form, pupilField(eye, "notes")),
    };
    if (row.equalReactive && (row.rapd || row.larger))
      errors[pupilField(eye, "equal")] = [
        `${E} pupil: "equal and reactive" contradicts ${row.rapd ? "a relative afferent defect" : "a larger pupil"}; untick one.`,
      ];
    if (row.equalReactive || row.rapd || row.larger || row.sizeMm !== null || row.notes) out[eye] = row;
  }
  if (out.right?.rapd && out.left?.rapd)
    errors[pupilField("left", "rapd")] = [
      "A relative afferent pupillary defect is found in one eye only (it compares the two); tick the eye with the defect.",
    ];
  if (out.right?.larger && out.left?.larger)
    errors[pupilField("left", "larger")] = ["Anisocoria: only one pupil can be the larger; tick that eye."];
  return done(errors, out);
}

export const AC_CELLS = {
  none: "None",
  trace: "Trace (fewer than 5 cells)",
  "1+": "1+",
  "2+": "2+",
  "3+": "3+",
  "4+": "4+",
} as const;
export type AcCells = keyof typeof AC_CELLS;
export type AnteriorChamberEye = {
  vanHerick: number | null;
  cells: AcCells | null;
  hyphaema: boolean;
  hypopyon: boolean;
  notes: string;
};
export const acField = (eye: EyeKey, part: "vh" | "cells" | "hyphaema" | "hypopyon" | "notes") => `${eye}_ac_${part}`;

export function parseAnteriorChamber(form: Form): Parsed<Partial<Record<EyeKey, AnteriorChamberEye>>> {
  const errors: FieldErrors = {};
  const out: Partial<Record<EyeKey, AnteriorChamberEye>> = {};
  for (const eye of EYES) {
    const E = SIDE[eye];
    const vh = parseNumber(form[acField(eye, "vh")], `${E} van Herick grade`, 0, 4, { integer: true });
    if (vh.error) errors[acField(eye, "vh")] = [vh.error];
    const row: AnteriorChamberEye = {
      vanHerick: vh.value,
      cells: choice(
        form,
        acField(eye, "cells"),
        Object.keys(AC_CELLS) as AcCells[],
        `${E} anterior chamber cells`,
        errors,
      ),
      hyphaema: ticked(form, acField(eye, "hyphaema")),
      hypopyon: ticked(form, acField(eye, "hypopyon")),
      notes: textOf(form, acField(eye, "notes")),
    };
    if (row.vanHerick !== null || row.cells || row.hyphaema || row.hypopyon || row.notes) out[eye] = row;
  }
  return done(errors, out);
}

export type IopReading = { mmHg: number; method: keyof typeof IOP_METHODS; time: string };
export const IOP_READINGS = 4;
/** Reading 1 keeps the plain names (right_mmHg, right_method, right_time); later ones end in _2, _3… */
export const iopField = (eye: EyeKey, part: "mmHg" | "method" | "time", n: number) =>
  `${eye}_${part}${n > 1 ? `_${n}` : ""}`;
export const cctField = (eye: EyeKey) => `${eye}_cct`;
const TIME = /^([01]\d|2[0-3]):[0-5]\d$/;

/**
 * IOP readings per eye (up to four), each with its method and time of day; a later reading left
 * without a method or time takes the one before it. Central corneal thickness when measured.
 */
export function parseIop(
  form: Form,
  /** The time of day (HH:MM) a reading without one was taken: the time of the save. */
  options: { defaultTime?: string } = {},
): Parsed<{ readings: Partial<Record<EyeKey, IopReading[]>>; cct: Partial<Record<EyeKey, number>> }> {
  const errors: FieldErrors = {};
  const readings: Partial<Record<EyeKey, IopReading[]>> = {};
  const cct: Partial<Record<EyeKey, number>> = {};
  for (const eye of EYES) {
    const E = SIDE[eye];
    let method: IopReading["method"] | null = null;
    let time = "";
    for (let n = 1; n <= IOP_READINGS; n++) {
      const which = n === 1 ? `${E} IOP` : `${E} IOP reading ${n}`;
      const p = parseNumber(form[iopField(eye, "mmHg", n)], `${which} (mmHg)`, 1, 80);
      if (p.error)
        errors[iopField(eye, "mmHg", n)] = [`${p.error} A pressure outside 1 to 80 mmHg is not a plausible reading.`];
      const m = choice(
        form,
        iopField(eye, "method", n),
        Object.keys(IOP_METHODS) as IopReading["method"][],
        `${which} method`,
        errors,
      );
      const t = (form[iopField(eye, "time", n)] ?? "").trim();
      if (t && !TIME.test(t)) errors[iopField(eye, "time", n)] = [`${which} time: use 24-hour HH:MM.`];
      if (p.value === null) continue;
      if (m) method = m;
      if (t && TIME.test(t)) time = t;
      else if (!t && !time && options.defaultTime && TIME.test(options.defaultTime)) time = options.defaultTime;
      if (!method && !errors[iopField(eye, "method", n)])
        errors[iopField(eye, "method", n)] = [`${which}: choose the method.`];
      if (!time && !errors[iopField(eye, "time", n)])
        errors[iopField(eye, "time", n)] = [`${which}: give the time of day it was measured.`];
      if (method && time) (readings[eye] ??= []).push({ mmHg: p.value, method, time });
    }
    const c = parseNumber(form[cctField(eye)], `${E} central corneal thickness (µm)`, 300, 800, { integer: true });
    if (c.error) errors[cctField(eye)] = [c.error];
    else if (c.value !== null) cct[eye] = c.value;
  }
  return done(errors, { readings, cct });
}

/** Mean of the readings, to one decimal (the value prompts and triage use). */
export function meanIop(readings: readonly { mmHg: number }[]): number | null {
  if (!readings.length) return null;
  return Math.round((readings.reduce((a, r) => a + r.mmHg, 0) / readings.length) * 10) / 10;
}

export const DISC_MARGINS = { distinct: "Distinct", blurred: "Blurred" } as const;
export type DiscEye = {
  verticalCd: number | null;
  margins: keyof typeof DISC_MARGINS | null;
  swelling: boolean;
  haemorrhage: boolean;
  pallor: boolean;
  notes: string;
};
export const discField = (eye: EyeKey, part: "cd" | "margins" | "swelling" | "haem" | "pallor" | "notes") =>
  `${eye}_disc_${part}`;

export function parseDiscs(form: Form): Parsed<Partial<Record<EyeKey, DiscEye>>> {
  const errors: FieldErrors = {};
  const out: Partial<Record<EyeKey, DiscEye>> = {};
  for (const eye of EYES) {
    const E = SIDE[eye];
    const cd = parseNumber(form[discField(eye, "cd")], `${E} vertical cup/disc ratio`, 0, 1, { step: 0.01 });
    if (cd.error)
      errors[discField(eye, "cd")] = [`${cd.error} The cup is part of the disc, so the ratio is between 0 and 1.`];
    const row: DiscEye = {
      verticalCd: cd.value,
      margins: choice(
        form,
        discField(eye, "margins"),
        Object.keys(DISC_MARGINS) as (keyof typeof DISC_MARGINS)[],
        `${E} disc margins`,
        errors,
      ),
      swelling: ticked(form, discField(eye, "swelling")),
      haemorrhage: ticked(form, discField(eye, "haem")),
      pallor: ticked(form, discField(eye, "pallor")),
      notes: textOf(form, discField(eye, "notes")),
    };
    if (row.swelling && row.margins === "distinct")
      errors[discField(eye, "margins")] = [
        `${E} disc: swelling with distinct margins — check the margins or untick swelling.`,
      ];
    if (row.verticalCd !== null || row.margins || row.swelling || row.haemorrhage || row.pallor || row.notes)
      out[eye] = row;
  }
  return done(errors, out);
}

export const FUNDUS_FINDINGS = {
  vitreousDetachment: "Posterior vitreous detachment",
  vitreousPigment: "Pigment in the anterior vitreous (tobacco dust)",
  retinalBreak: "Retinal break (tear or hole)",
  retinalDetachment: "Retinal detachment",
  drusen: "Drusen",
  suspectedWetAmd: "Suspected wet (neovascular) AMD: new fluid or haemorrhage at the macula",
} as const;
export type FundusKey = keyof typeof FUNDUS_FINDINGS;
export type FundusEye = Record<FundusKey, boolean> & { maculaNotes: string; peripheryNotes: string };
export const fundusField = (eye: EyeKey, part: FundusKey | "macula" | "periphery") => `${eye}_fu_${part}`;

export function parseFundus(form: Form): Parsed<Partial<Record<EyeKey, FundusEye>>> {
  const out: Partial<Record<EyeKey, FundusEye>> = {};
  for (const eye of EYES) {
    const row = {
      maculaNotes: textOf(form, fundusField(eye, "macula")),
      peripheryNotes: textOf(form, fundusField(eye, "periphery")),
    } as FundusEye;
    for (const k of Object.keys(FUNDUS_FINDINGS) as FundusKey[]) row[k] = ticked(form, fundusField(eye, k));
    if (Object.values(row).some(Boolean)) out[eye] = row;
  }
  return { ok: true, value: out };
}

export const DILATING_DRUGS = {
  tropicamide: "Tropicamide",
  phenylephrine: "Phenylephrine",
  cyclopentolate: "Cyclopentolate",
  other: "Other (name it)",
} as const;
export type DilatingDrug = keyof typeof DILATING_DRUGS;
export type Dilation = {
  drug: DilatingDrug;
  otherDrug: string;
  strengthPercent: number;
  eye: "right" | "left" | "both";
  instilledAt: Date;
  batch: string;
};
export const DILATION_ROWS = 3;
export const dilationField = (n: number, part: "drug" | "other" | "strength" | "eye" | "at" | "batch") =>
  `dil${n}_${part}`;
const LOCAL_DATETIME = /^(\d{4}-\d{2}-\d{2})T([01]\d|2[0-3]):([0-5]\d)$/;

/**
 * Drops instilled: drug, strength (%), eye(s) and the date and time in the practice's time zone.
 * A time in the future, or more than a day before the exam, is refused.
 */
export function parseDilations(form: Form, ctx: { now: Date; examinedAt: Date; timeZone: string }): Parsed<Dilation[]> {
  const errors: FieldErrors = {};
  const out: Dilation[] = [];
  for (let n = 1; n <= DILATION_ROWS; n++) {
    const f = (p: Parameters<typeof dilationField>[1]) => (form[dilationField(n, p)] ?? "").trim();
    const which = `Drops ${n}`;
    if (!["drug", "other", "strength", "eye", "at", "batch"].some((p) => f(p as "drug"))) continue;
    const drug = choice(
      form,
      dilationField(n, "drug"),
      Object.keys(DILATING_DRUGS) as DilatingDrug[],
      `${which} drug`,
      errors,
    );
    if (!drug && !errors[dilationField(n, "drug")]) errors[dilationField(n, "drug")] = [`${which}: choose the drug.`];
    if (drug === "other" && !f("other")) errors[dilationField(n, "other")] = [`${which}: name the drug.`];
    const strength = parseNumber(f("strength"), `${which} strength (%)`, 0.1, 10);
    if (strength.error) errors[dilationField(n, "strength")] = [strength.error];
    else if (strength.value === null)
      errors[dilationField(n, "strength")] = [`${which}: give the strength in % (for example 1 or 2.5).`];
    const eye = choice(form, dilationField(n, "eye"), ["right", "left", "both"] as const, `${which} eye`, errors);
    if (!eye && !errors[dilationField(n, "eye")])
      errors[dilationField(n, "eye")] = [`${which}: choose the eye or both eyes.`];
    let at: Date | null = null;
    const m = LOCAL_DATETIME.exec(f("at"));
    if (!f("at")) errors[dilationField(n, "at")] = [`${which}: give the date and time the drops went in.`];
    else if (!m) errors[dilationField(n, "at")] = [`${which} time: use the date and 24-hour time (YYYY-MM-DD HH:MM).`];
    else {
      at = wallTimeToInstant(m[1]!, Number(m[2]) * 60 + Number(m[3]), ctx.timeZone);
      if (!at)
        errors[dilationField(n, "at")] = [
          `${which}: that time does not exist on that day in the practice's time zone (clocks change).`,
        ];
      else if (at.getTime() > ctx.now.getTime() + 5 * 60e3)
        errors[dilationField(n, "at")] = [`${which}: ${m[1]} ${m[2]}:${m[3]} is in the future.`];
      else if (at.getTime() < ctx.examinedAt.getTime() - 24 * 3600e3)
        errors[dilationField(n, "at")] = [`${which}: ${m[1]} is more than a day before this exam.`];
    }
    if (drug && strength.value !== null && eye && at && !errors[dilationField(n, "at")])
      out.push({
        drug,
        otherDrug: drug === "other" ? f("other").slice(0, 120) : "",
        strengthPercent: strength.value,
        eye,
        instilledAt: at,
        batch: f("batch").slice(0, 60),
      });
  }
  return done(errors, out);
}

/** "2026-12-02T10:15" of an instant in the practice's time zone (the datetime-local input's value). */
export function localDateTime(at: Date, timeZone: string): string {
  const p = localParts(at, timeZone);
  return `${p.date}T${String(Math.floor(p.minute / 60)).padStart(2, "0")}:${String(p.minute % 60).padStart(2, "0")}`;
}

/** Diagnoses chosen per code: right, left or both eyes. */
export function parseDiagnoses(form: Form): Parsed<{ code: string; label: string; eye: "right" | "left" | "both" }[]> {
  const errors: FieldErrors = {};
  const out: { code: string; label: string; eye: "right" | "left" | "both" }[] = [];
  for (const [k, v] of Object.entries(form)) {
    if (!k.startsWith("dx_") || !(v ?? "").trim()) continue;
    const code = k.slice(3);
    const known = DIAGNOSES.find((d) => d.code === code);
    if (!known) {
      errors[k] = [`Diagnosis code "${code}" is not on the list.`];
      continue;
    }
    const eye = choice(form, k, ["right", "left", "both"] as const, `${code} ${known.label}`, errors);
    if (eye) out.push({ code, label: known.label, eye });
  }
  out.sort((a, b) => a.code.localeCompare(b.code));
  return done(errors, out);
}
