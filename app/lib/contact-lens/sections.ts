/**
 * The exam's contact-lens sections, fitting and aftercare: field names, option lists and the
 * parsing of what the clinician typed, against the practice's lens catalogue. Shared by the exam
 * page and the server, which refuses a section with any invalid field.
 */
import { parseAcuity, parseNumber, parseRxText, type FieldErrors, type Parsed } from "~/lib/exam/sections";
import type { AcuityNotation, SphCyl } from "~/lib/optics";
import { toCylinderForm } from "~/lib/optics";
import {
  checkBaseCurve,
  checkDiameter,
  checkLensPower,
  isToric,
  REPLACEMENTS,
  type CatalogueLens,
  type Replacement,
} from "./catalogue";

export const CL_SECTIONS = ["cl_fitting", "cl_aftercare"] as const;
export type ClSectionId = (typeof CL_SECTIONS)[number];
export const isClSection = (s: string): s is ClSectionId => (CL_SECTIONS as readonly string[]).includes(s);

export const CENTRATION = {
  centred: "Centred",
  decentred_up: "Decentred up",
  decentred_down: "Decentred down",
  decentred_nasal: "Decentred nasally",
  decentred_temporal: "Decentred temporally",
} as const;
export const MOVEMENT = { tight: "Too little (tight)", optimal: "Optimal", excessive: "Excessive (loose)" } as const;
export const COVERAGE = { full: "Full corneal coverage", incomplete: "Incomplete: cornea exposed" } as const;
export const ROTATION = {
  none: "No rotation",
  clockwise: "Clockwise (as the examiner sees it)",
  anticlockwise: "Anticlockwise (as the examiner sees it)",
} as const;
export const CARE_SYSTEMS = {
  none_daily: "None (daily disposable)",
  multipurpose: "Multipurpose solution",
  peroxide: "Hydrogen peroxide system",
  rigid: "Rigid lens care system",
  other: "Other (say which in the notes)",
} as const;

/**
 * Anterior-eye grading on the Efron grading scales: each sign graded 0 (normal) to 4 (severe)
 * against the scale's illustrations (N. Efron, "Grading scales for contact lens complications",
 * Ophthalmic and Physiological Optics 1998; the published scales list conjunctival redness,
 * limbal redness, corneal staining and papillary conjunctivitis among their 0–4 scales).
 * Decimal grades (steps of 0.1) are allowed: the scales' author recommends interpolating
 * between the pictures (from memory). A grade of 2 or more usually calls for action (common
 * practice); the grades are for the clinician's judgement.
 */
export const GRADING_SCALE = "Efron grading scales (0–4)";
export const GRADES = {
  bulbar: "Conjunctival (bulbar) redness",
  limbal: "Limbal redness",
  staining: "Corneal staining",
  papillary: "Papillary conjunctivitis",
} as const;
export type GradeKey = keyof typeof GRADES;

export const CL_EYE_PARTS = [
  "lens",
  "maker",
  "name",
  "material",
  "replacement",
  "bc",
  "dia",
  "power",
  "kflat",
  "kaxis",
  "ksteep",
  "va",
  "overrx",
  "centration",
  "movement",
  "coverage",
  "rotation",
  "rotdir",
  ...(Object.keys(GRADES) as GradeKey[]).map((g) => `gr_${g}` as const),
] as const;
export type ClEyePart = (typeof CL_EYE_PARTS)[number];
export const CL_COMMON_PARTS = [
  "topography",
  "wearHours",
  "wearDays",
  "wornToday",
  "care",
  "careNotes",
  "advice",
] as const;
export type ClCommonPart = (typeof CL_COMMON_PARTS)[number];

/** Field names as the section's form posts them. */
export const clField = (eye: "right" | "left", part: ClEyePart) => `${eye}_${part}`;

export type ClEye = {
  lensId: string | null;
  manufacturer: string;
  name: string;
  material: string;
  replacement: Replacement | null;
  baseCurveMm: number | null;
  diameterMm: number | null;
  power: SphCyl | null;
  kFlatMm: number | null;
  kFlatAxis: number | null;
  kSteepMm: number | null;
  va: string | null;
  overRefraction: SphCyl | null;
  centration: keyof typeof CENTRATION | null;
  movement: keyof typeof MOVEMENT | null;
  coverage: keyof typeof COVERAGE | null;
  rotationDeg: number | null;
  rotationDirection: keyof typeof ROTATION | null;
  grades: Partial<Record<GradeKey, number>>;
};
export type ClSection = {
  eyes: Partial<Record<"right" | "left", ClEye>>;
  topography: string;
  wearHoursPerDay: number | null;
  wearDaysPerWeek: number | null;
  wornTodayHours: number | null;
  careSystem: keyof typeof CARE_SYSTEMS | null;
  careNotes: string;
  advice: string;
};

type Form = Record<string, string | undefined>;
const SIDE = { right: "Right", left: "Left" } as const;

function pick<T extends string>(v: string, options: Record<T, string>, label: string, errors: FieldErrors, k: string) {
  if (!v) return null;
  if (!(v in options)) {
    errors[k] = [`${label}: choose one of the listed options.`];
    return null;
  }
  return v as T;
}

/**
 * Parses a contact-lens section. Fitting: each eye fitted names a catalogue lens with its base
 * curve, diameter and power, all of which the lens must be made in (the prescription is issued
 * from these). Aftercare: the lens worn is a catalogue lens or one typed by maker and name.
 */
export function parseClSection(
  section: ClSectionId,
  form: Form,
  catalogue: readonly CatalogueLens[],
  notation: AcuityNotation | null = null,
): Parsed<ClSection> {
  const errors: FieldErrors = {};
  const fitting = section === "cl_fitting";
  const eyes: ClSection["eyes"] = {};
  for (const eye of ["right", "left"] as const) {
    const f = (p: ClEyePart) => (form[clField(eye, p)] ?? "").trim();
    const E = SIDE[eye];
    if (!CL_EYE_PARTS.some((p) => f(p))) continue;
    const err = (p: ClEyePart, m: string) => (errors[clField(eye, p)] ??= []).push(m);
    const lensId = f("lens") || null;
    const lens = lensId ? catalogue.find((l) => l.id === lensId) : undefined;
    if (lensId && !lens) err("lens", `${E} lens: choose a lens from the practice's catalogue.`);
    if (fitting && !lensId) err("lens", `${E} eye: choose the lens fitted from the catalogue.`);
    if (!lensId && !fitting && !(f("maker") && f("name")))
      err("lens", `${E} lens worn: choose it from the catalogue, or type its manufacturer and name.`);
    const replacement = lens
      ? lens.replacement
      : pick(f("replacement"), REPLACEMENTS, `${E} replacement`, errors, clField(eye, "replacement"));
    const bc = parseNumber(f("bc"), `${E} base curve (mm)`, 5, 11, { step: 0.01 });
    if (bc.error) err("bc", bc.error);
    const dia = parseNumber(f("dia"), `${E} diameter (mm)`, 7, 25, { step: 0.1 });
    if (dia.error) err("dia", dia.error);
    const power = parseRxText(f("power"), `${E} lens power`);
    if (power.error) err("power", power.error);
    if (fitting) {
      if (bc.value === null && !bc.error) err("bc", `${E} eye: give the base curve fitted.`);
      if (dia.value === null && !dia.error) err("dia", `${E} eye: give the diameter fitted.`);
      if (!f("power")) err("power", `${E} eye: give the lens power fitted.`);
    }
    if (lens) {
      if (bc.value !== null) {
        const e = checkBaseCurve(lens, bc.value, `${E} base curve`);
        if (e) err("bc", e);
      }
      if (dia.value !== null) {
        const e = checkDiameter(lens, dia.value, `${E} diameter`);
        if (e) err("dia", e);
      }
      if (power.value) for (const e of checkLensPower(lens, power.value, `${E} lens power`)) err("power", e);
    }
    const kflat = parseNumber(f("kflat"), `${E} flat K (mm)`, 5, 11, { step: 0.01 });
    if (kflat.error) err("kflat", kflat.error);
    const kaxis = parseNumber(f("kaxis"), `${E} flat K axis (°)`, 1, 180, { integer: true });
    if (kaxis.error) err("kaxis", kaxis.error);
    const ksteep = parseNumber(f("ksteep"), `${E} steep K (mm)`, 5, 11, { step: 0.01 });
    if (ksteep.error) err("ksteep", ksteep.error);
    if (kflat.value !== null && ksteep.value !== null && ksteep.value > kflat.value)
      err(
        "ksteep",
        `${E}: the steep K radius (${ksteep.value} mm) cannot be longer than the flat K (${kflat.value} mm).`,
      );
    if (kflat.value !== null && kaxis.value === null && !kaxis.error) err("kaxis", `${E}: give the flat K axis.`);
    const va = parseAcuity(f("va"), `${E} VA with the lens`, { notation, distance: "distance" });
    if (va.error) err("va", va.error);
    const over = parseRxText(f("overrx"), `${E} over-refraction`);
    if (over.error) err("overrx", over.error);
    const rotation = parseNumber(f("rotation"), `${E} toric rotation (°)`, 0, 90, { integer: true });
    if (rotation.error) err("rotation", rotation.error);
    const rotdir = pick(f("rotdir"), ROTATION, `${E} rotation direction`, errors, clField(eye, "rotdir"));
    if (rotation.value && (!rotdir || rotdir === "none") && !errors[clField(eye, "rotdir")])
      err("rotdir", `${E}: say which way the toric lens rotates.`);
    const grades: ClEye["grades"] = {};
    for (const g of Object.keys(GRADES) as GradeKey[]) {
      const r = parseNumber(f(`gr_${g}`), `${E} ${GRADES[g].toLowerCase()} (Efron grade)`, 0, 4, { step: 0.1 });
      if (r.error) err(`gr_${g}`, `${r.error} Efron grades run from 0 to 4.`);
      else if (r.value !== null) grades[g] = r.value;
    }
    eyes[eye] = {
      lensId: lens?.id ?? null,
      manufacturer: lens?.manufacturer ?? f("maker").slice(0, 120),
      name: lens?.name ?? f("name").slice(0, 120),
      material: lens?.material ?? f("material").slice(0, 120),
      replacement,
      baseCurveMm: bc.value,
      diameterMm: dia.value,
      power: power.value ? toCylinderForm(power.value, "minus") : null,
      kFlatMm: kflat.value,
      kFlatAxis: kaxis.value,
      kSteepMm: ksteep.value,
      va: va.value?.notation ?? null,
      overRefraction: over.value,
      centration: pick(f("centration"), CENTRATION, `${E} centration`, errors, clField(eye, "centration")),
      movement: pick(f("movement"), MOVEMENT, `${E} movement`, errors, clField(eye, "movement")),
      coverage: pick(f("coverage"), COVERAGE, `${E} coverage`, errors, clField(eye, "coverage")),
      rotationDeg: rotation.value,
      rotationDirection: rotdir,
      grades,
    };
    if (lens && isToric(lens) && fitting && rotation.value === null && !rotation.error)
      err("rotation", `${E}: a toric lens is fitted; give its rotation in degrees (0 when it sits on its mark).`);
  }
  const c = (k: ClCommonPart) => (form[k] ?? "").trim();
  const hours = parseNumber(c("wearHours"), "Usual wearing time (hours a day)", 0, 24, { step: 0.5 });
  if (hours.error) errors.wearHours = [hours.error];
  const days = parseNumber(c("wearDays"), "Days a week worn", 0, 7, { integer: true });
  if (days.error) errors.wearDays = [days.error];
  const today = parseNumber(c("wornToday"), "Hours worn today", 0, 24, { step: 0.5 });
  if (today.error) errors.wornToday = [today.error];
  const care = pick(c("care"), CARE_SYSTEMS, "Care system", errors, "care");
  if (care === "other" && !c("careNotes")) errors.careNotes = ["Care system: name the system used."];
  if (Object.keys(errors).length) return { ok: false, errors };
  return {
    ok: true,
    value: {
      eyes,
      topography: c("topography").slice(0, 2000),
      wearHoursPerDay: hours.value,
      wearDaysPerWeek: days.value,
      wornTodayHours: today.value,
      careSystem: care,
      careNotes: c("careNotes").slice(0, 1000),
      advice: c("advice").slice(0, 4000),
    },
  };
}

/** Whether a form holds anything for the section (an empty section is saved as nothing). */
export function clSectionIsEmpty(form: Form) {
  return (
    !(["right", "left"] as const).some((eye) => CL_EYE_PARTS.some((p) => (form[clField(eye, p)] ?? "").trim())) &&
    !CL_COMMON_PARTS.some((k) => (form[k] ?? "").trim())
  );
}
