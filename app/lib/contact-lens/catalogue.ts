/**
 * The contact-lens catalogue's rules: which powers, base curves and diameters a lens is made in,
 * and the spectacle-to-cornea guide. Plain TypeScript shared by the exam page (errors as you
 * type) and the server (which refuses a prescription for a lens that is not made).
 */
import { formatRx, toCylinderForm, vertexConvert, type SphCyl } from "~/lib/optics";

export const REPLACEMENTS = {
  daily: "Daily disposable",
  two_weekly: "Two-weekly",
  monthly: "Monthly",
  quarterly: "Quarterly",
  yearly: "Yearly",
} as const;
export type Replacement = keyof typeof REPLACEMENTS;

export type CatalogueLens = {
  id: string;
  manufacturer: string;
  name: string;
  material: string;
  replacement: Replacement;
  baseCurvesMm: number[];
  diametersMm: number[];
  sphereMin: number;
  sphereMax: number;
  sphereStep: number;
  /** Toric cylinder powers made (minus cylinder); empty for a spherical lens. */
  cylinders: number[];
  axisStep: number | null;
};

export const isToric = (lens: Pick<CatalogueLens, "cylinders">) => lens.cylinders.length > 0;
export const lensLabel = (lens: Pick<CatalogueLens, "manufacturer" | "name">) => `${lens.manufacturer} ${lens.name}`;

/** Dioptres as printed: sign, two decimals ("+1.25", "−0.75" with a plain minus, "0.00"). */
export const dioptres = (x: number) => (x > 0 ? "+" : "") + (Math.abs(x) < 1e-9 ? "0.00" : x.toFixed(2));

const EPS = 1e-6;
/** Whether `value` is `start` plus a whole number of `step`s. */
export function onStep(value: number, step: number, start = 0) {
  const n = (value - start) / step;
  return Math.abs(n - Math.round(n)) < EPS;
}
/** The two made values either side of an off-step one, within [min, max]. */
export function neighbours(value: number, step: number, min: number, max: number, start = min): number[] {
  const below = start + Math.floor((value - start) / step + EPS) * step;
  const above = below + step;
  return [below, above].filter((v) => v >= min - EPS && v <= max + EPS).map((v) => Math.round(v * 1000) / 1000);
}

/** What a catalogue lens says about its powers, in words ("spheres −10.00 to +6.00 in 0.25 D steps; …"). */
export function describePowers(lens: CatalogueLens): string {
  const sph = `spheres ${dioptres(lens.sphereMin)} to ${dioptres(lens.sphereMax)} in ${lens.sphereStep.toFixed(2)} D steps`;
  if (!isToric(lens)) return `${sph}; spherical only`;
  return `${sph}; cylinders ${lens.cylinders.map(dioptres).join(", ")}; axes in ${lens.axisStep}° steps`;
}

/**
 * Errors for a power that the lens is not made in, each naming the lens, the value and what is
 * made instead (the nearest steps). Spheres are counted from the lens's lowest power in its
 * step; the power is read in minus-cylinder form, as the catalogue lists cylinders. An empty
 * list means the power is made.
 */
export function checkLensPower(lens: CatalogueLens, power: SphCyl, where: string): string[] {
  const rx = toCylinderForm(power, "minus");
  const name = lensLabel(lens);
  const errors: string[] = [];
  if (rx.sphere < lens.sphereMin - EPS || rx.sphere > lens.sphereMax + EPS)
    errors.push(
      `${where}: sphere ${dioptres(rx.sphere)} is outside the range ${name} is made in (${dioptres(lens.sphereMin)} to ${dioptres(lens.sphereMax)}).`,
    );
  else if (!onStep(rx.sphere, lens.sphereStep, lens.sphereMin))
    errors.push(
      `${where}: sphere ${dioptres(rx.sphere)} is not made; ${name} comes in ${lens.sphereStep.toFixed(2)} D steps (nearest ${neighbours(rx.sphere, lens.sphereStep, lens.sphereMin, lens.sphereMax).map(dioptres).join(" or ")}).`,
    );
  if (!isToric(lens)) {
    if (rx.cylinder !== 0)
      errors.push(
        `${where}: ${name} is a spherical lens, so it has no cylinder; choose a toric lens or prescribe a sphere.`,
      );
    return errors;
  }
  if (rx.cylinder === 0) {
    errors.push(`${where}: ${name} is a toric lens; give its cylinder and axis.`);
    return errors;
  }
  if (!lens.cylinders.some((c) => Math.abs(c - rx.cylinder) < EPS))
    errors.push(
      `${where}: cylinder ${dioptres(rx.cylinder)} is not made; ${name} comes in cylinders ${lens.cylinders.map(dioptres).join(", ")}.`,
    );
  const step = lens.axisStep ?? 1;
  if (!onStep(rx.axis, step)) {
    const near = neighbours(rx.axis, step, 0, 180, 0).map((a) => (a === 0 ? 180 : a));
    errors.push(
      `${where}: axis ${rx.axis} is not made; ${name} comes in ${step}° steps (nearest ${near.join(" or ")}).`,
    );
  }
  return errors;
}

export function checkBaseCurve(lens: CatalogueLens, bc: number, where: string): string | undefined {
  if (lens.baseCurvesMm.some((b) => Math.abs(b - bc) < EPS)) return undefined;
  return `${where}: base curve ${bc.toFixed(2)} mm is not made; ${lensLabel(lens)} comes in ${lens.baseCurvesMm.map((b) => b.toFixed(2)).join(", ")} mm.`;
}

export function checkDiameter(lens: CatalogueLens, dia: number, where: string): string | undefined {
  if (lens.diametersMm.some((d) => Math.abs(d - dia) < EPS)) return undefined;
  return `${where}: diameter ${dia.toFixed(1)} mm is not made; ${lensLabel(lens)} comes in ${lens.diametersMm.map((d) => d.toFixed(1)).join(", ")} mm.`;
}

/**
 * The spectacle refraction carried to the cornea, as a guide for choosing the lens power only:
 * each principal meridian by F_c = F_s / (1 − d·F_s), d the vertex distance in metres (the
 * effective-power formula, e.g. Bennett & Rabbetts' Clinical Visual Optics, ch. "Contact lenses").
 * The fitted lens and the over-refraction decide the power ordered, never this figure.
 */
export function vertexGuide(spectacle: SphCyl, vertexMm: number): { exact: SphCyl; text: string } {
  const exact = vertexConvert(spectacle, vertexMm, 0);
  const r = (x: number) => Math.round(x * 100) / 100;
  const text = `${formatRx({ sphere: r(exact.sphere), cylinder: r(exact.cylinder), axis: exact.axis })} at the cornea (from ${formatRx(spectacle)} at ${vertexMm} mm)`;
  return { exact, text };
}

type Errors = Record<string, string[]>;

/** A list of numbers typed with commas or spaces ("8.4, 8.7"), each within [min, max]. */
export function parseNumberList(
  text: string,
  label: string,
  min: number,
  max: number,
): { values: number[]; error?: string } {
  if (/(^|[^\d.])\d+,\d+([^\d.]|$)/.test(text))
    return {
      values: [],
      error: `${label}: "${text.trim()}" — use a decimal point, not a comma, and separate values with a comma and a space.`,
    };
  const parts = text
    .replace(/\u2212/g, "-")
    .split(/[,;\s]+/)
    .filter(Boolean);
  const values: number[] = [];
  for (const p of parts) {
    if (!/^[+-]?\d+(\.\d+)?$/.test(p))
      return { values: [], error: `${label}: "${p}" is not a number; separate values with commas.` };
    const n = Number(p);
    if (n < min || n > max) return { values: [], error: `${label}: ${p} is outside ${min} to ${max}.` };
    if (!values.includes(n)) values.push(n);
  }
  return { values: values.sort((a, b) => a - b) };
}

/** The owner's form for a catalogue lens, checked field by field. */
export function parseCatalogueLens(
  form: Record<string, string | undefined>,
): { ok: true; value: Omit<CatalogueLens, "id"> } | { ok: false; errors: Errors } {
  const errors: Errors = {};
  const t = (k: string) => (form[k] ?? "").trim();
  const need = (k: string, label: string) => {
    if (!t(k)) errors[k] = [`Give the ${label}.`];
    else if (t(k).length > 80) errors[k] = [`${label[0]!.toUpperCase()}${label.slice(1)}: at most 80 characters.`];
    return t(k).slice(0, 80);
  };
  const manufacturer = need("manufacturer", "manufacturer");
  const name = need("name", "lens name");
  const material = need("material", "material");
  const replacement = t("replacement");
  if (!(replacement in REPLACEMENTS)) errors.replacement = ["Choose the replacement schedule."];
  const list = (k: string, label: string, min: number, max: number, required: boolean) => {
    const r = parseNumberList(t(k), label, min, max);
    if (r.error) errors[k] = [r.error];
    else if (required && !r.values.length) errors[k] = [`${label}: give at least one value.`];
    return r.values;
  };
  const baseCurvesMm = list("baseCurves", "Base curves (mm)", 5, 11, true);
  const diametersMm = list("diameters", "Diameters (mm)", 7, 25, true);
  const cylinders = list("cylinders", "Toric cylinders (D)", -10, -0.25, false);
  const num = (k: string, label: string, min: number, max: number) => {
    const s = t(k).replace(/\u2212/g, "-");
    if (!s) {
      errors[k] = [`Give the ${label}.`];
      return NaN;
    }
    if (!/^[+-]?\d+(\.\d+)?$/.test(s)) {
      errors[k] = [`${label[0]!.toUpperCase()}${label.slice(1)}: "${s}" is not a number.`];
      return NaN;
    }
    const n = Number(s);
    if (n < min || n > max)
      errors[k] = [`${label[0]!.toUpperCase()}${label.slice(1)}: ${s} is outside ${min} to ${max}.`];
    return n;
  };
  const sphereMin = num("sphereMin", "lowest sphere (D)", -30, 30);
  const sphereMax = num("sphereMax", "highest sphere (D)", -30, 30);
  const sphereStep = num("sphereStep", "sphere step (D)", 0.25, 1);
  if (!errors.sphereStep && !onStep(sphereStep, 0.25))
    errors.sphereStep = ["Sphere step: use 0.25, 0.50, 0.75 or 1.00."];
  if (!errors.sphereMin && !errors.sphereMax && sphereMin >= sphereMax)
    errors.sphereMax = ["The highest sphere must be above the lowest."];
  for (const c of cylinders) if (!onStep(c, 0.25)) errors.cylinders = [`Toric cylinders: ${c} is not in 0.25 D steps.`];
  let axisStep: number | null = null;
  if (cylinders.length) {
    const a = num("axisStep", "axis step (°)", 1, 90);
    if (!errors.axisStep && (!Number.isInteger(a) || 180 % a !== 0))
      errors.axisStep = ["Axis step: a whole number of degrees that divides 180 (for example 5 or 10)."];
    axisStep = a;
  } else if (t("axisStep")) errors.axisStep = ["A spherical lens has no axis step; give toric cylinders or clear it."];
  if (Object.keys(errors).length) return { ok: false, errors };
  return {
    ok: true,
    value: {
      manufacturer,
      name,
      material,
      replacement: replacement as Replacement,
      baseCurvesMm,
      diametersMm,
      sphereMin,
      sphereMax,
      sphereStep,
      cylinders,
      axisStep,
    },
  };
}
