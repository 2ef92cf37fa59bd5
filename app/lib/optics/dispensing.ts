/**
 * Verification of finished spectacle lenses against the order, with the
 * tolerances of either dispensing standard a practice works to:
 *
 * - ANSI Z80.1-2015 (American National Standard for Ophthalmics — Prescription
 *   Ophthalmic Lenses — Recommendations). Source: published quick-reference
 *   summaries of Z80.1-2015 (tables for distance power, axis, add, prism
 *   reference point and prismatic imbalance); the standard's own text was not
 *   consulted. As in those tables, powers are compared in minus-cylinder
 *   convention and the sphere tolerance applies to the sphere meridian.
 * - BS EN ISO 21987:2017 (Ophthalmic optics — Mounted spectacle lenses). Source:
 *   published summaries and training notes of the ISO 21987 / ISO 8980-1 power,
 *   axis, add and prismatic-imbalance tables, as recalled (`// from memory`);
 *   the standard's own text was not consulted. Power tolerances are chosen by
 *   the principal meridian of highest absolute power.
 *
 * Either way the check is an aid: the optician verifying the spectacles decides,
 * and the standard's current text governs.
 */
import { assertSphCyl, assertFinite, clean, RxError, type SphCyl } from "./core";
import { meridianPower, toCylinderForm } from "./rx";

/** The dispensing standards the check implements. */
export const DISPENSING_STANDARDS = ["ANSI Z80.1-2015", "BS EN ISO 21987:2017"] as const;
export type DispensingStandard = (typeof DISPENSING_STANDARDS)[number];

/** A spectacle lens order or measurement: sphero-cylinder plus optional reading addition. */
export type LensRx = SphCyl & { add?: number };

/** Lens families with separate power tolerances in Z80.1-2015. */
export type LensType = "single-vision" | "multifocal" | "progressive";

/** The lens elements Z80.1 sets tolerances for. */
export type DispensingElement = "sphere" | "cylinder" | "axis" | "add" | "second meridian";

/** One element of the verification report. */
export type DispensingCheck = {
  element: DispensingElement;
  /** Ordered value (minus-cylinder form for sphere, cylinder and axis). */
  ordered: number;
  /** Measured value (minus-cylinder form for sphere, cylinder and axis). */
  measured: number;
  /** Measured − ordered in D; for the axis, the unsigned angular difference in degrees. */
  difference: number;
  /** Tolerance applied (± D or ± degrees); null when the standard sets none. */
  tolerance: number | null;
  /** False when no tolerance applies (axis of a cylinder under 0.12 D, or no cylinder measured). */
  applicable: boolean;
  pass: boolean;
  rule: string;
};

/** Result of {@link checkDispensingReport}: every element, pass/fail each. */
export type DispensingReport = {
  pass: boolean;
  standard: DispensingStandard;
  lensType: LensType;
  checks: DispensingCheck[];
};

/** One out-of-tolerance element, as listed by {@link checkDispensing}. */
export type DispensingFailure = {
  element: DispensingElement;
  ordered: number;
  measured: number;
  tolerance: number;
};

/** Power tolerance bands: up to `upTo` D (inclusive) use `plusMinus` D, above it `percent` of the power. */
type PowerBands = { bands: { upTo: number; plusMinus: number }[]; percent: number };

const POWER_TOLERANCES: Record<"standard" | "progressive", { sphere: PowerBands; cylinder: PowerBands }> = {
  standard: {
    sphere: { bands: [{ upTo: 6.5, plusMinus: 0.13 }], percent: 2 },
    cylinder: {
      bands: [
        { upTo: 2, plusMinus: 0.13 },
        { upTo: 4.5, plusMinus: 0.15 },
      ],
      percent: 4,
    },
  },
  progressive: {
    sphere: { bands: [{ upTo: 8, plusMinus: 0.16 }], percent: 2 },
    cylinder: {
      bands: [
        { upTo: 2, plusMinus: 0.16 },
        { upTo: 3.5, plusMinus: 0.18 },
      ],
      percent: 5,
    },
  },
};

/**
 * BS EN ISO 21987:2017 power tolerances (the same table as ISO 8980-1 for uncut lenses), by the
 * absolute power of the principal meridian of highest power: tolerance on each principal meridian,
 * and on the cylinder by its size (up to 0.75 D, to 4.00 D, to 6.00 D, above 6.00 D).
 * // from memory — published summaries of the ISO 8980-1 / ISO 21987 tables, not the standard's text.
 */
const ISO_POWER_TABLE: { upTo: number; meridian: number; cylinder: [number, number, number, number] }[] = [
  { upTo: 3, meridian: 0.12, cylinder: [0.09, 0.12, 0.18, 0.18] },
  { upTo: 6, meridian: 0.12, cylinder: [0.12, 0.18, 0.18, 0.25] },
  { upTo: 9, meridian: 0.12, cylinder: [0.12, 0.18, 0.18, 0.25] },
  { upTo: 12, meridian: 0.18, cylinder: [0.12, 0.18, 0.25, 0.25] },
  { upTo: 20, meridian: 0.25, cylinder: [0.18, 0.25, 0.25, 0.25] },
  { upTo: Number.POSITIVE_INFINITY, meridian: 0.37, cylinder: [0.25, 0.25, 0.37, 0.37] },
];
const ISO_CYL_BANDS = [0.75, 4, 6];

/**
 * BS EN ISO 21987:2017 axis tolerance by ordered cylinder: ±16° to 0.25 D, ±9° to 0.50 D,
 * ±6° to 0.75 D, ±4° to 1.50 D, ±3° above; none under 0.12 D.
 * // from memory — published summaries of the ISO 21987 axis table, not the standard's text.
 */
const ISO_AXIS_TOLERANCES = [
  { upTo: 0.25, degrees: 16 },
  { upTo: 0.5, degrees: 9 },
  { upTo: 0.75, degrees: 6 },
  { upTo: 1.5, degrees: 4 },
];
const ISO_AXIS_TOLERANCE_ABOVE_1_50 = 3;

/** Axis tolerance by ordered cylinder magnitude, from 0.12 D up; below 0.12 D none is defined. */
const AXIS_TOLERANCES = [
  { upTo: 0.25, degrees: 14 },
  { upTo: 0.5, degrees: 7 },
  { upTo: 0.75, degrees: 5 },
  { upTo: 1.5, degrees: 3 },
];
const AXIS_TOLERANCE_ABOVE_1_50 = 2;
const AXIS_MIN_CYLINDER = 0.12;

/** Add tolerance: ±0.12 D up to 4.00 D, ±0.18 D above. */
const ADD_LIMIT = 4;

const EPS = 1e-9;

function axisTolerance(cylinderMagnitude: number, standard: DispensingStandard = "ANSI Z80.1-2015"): number | null {
  if (cylinderMagnitude < AXIS_MIN_CYLINDER - EPS) return null;
  const iso = standard === "BS EN ISO 21987:2017";
  const band = (iso ? ISO_AXIS_TOLERANCES : AXIS_TOLERANCES).find((b) => cylinderMagnitude <= b.upTo + EPS);
  return band ? band.degrees : iso ? ISO_AXIS_TOLERANCE_ABOVE_1_50 : AXIS_TOLERANCE_ABOVE_1_50;
}

function isoPowerTolerances(o: SphCyl) {
  const highest = Math.max(Math.abs(o.sphere), Math.abs(o.sphere + o.cylinder));
  const row = ISO_POWER_TABLE.find((r) => highest <= r.upTo + EPS)!;
  const cyl = Math.abs(o.cylinder);
  const band = ISO_CYL_BANDS.findIndex((b) => cyl <= b + EPS);
  const cylTol = row.cylinder[band === -1 ? 3 : band]!;
  const range = `highest meridian ${highest.toFixed(2)} D`;
  return {
    meridian: { tolerance: row.meridian, rule: `±${row.meridian.toFixed(2)} D for each principal meridian (${range})` },
    cylinder: { tolerance: cylTol, rule: `±${cylTol.toFixed(2)} D for a ${cyl.toFixed(2)} D cylinder (${range})` },
  };
}

function powerTolerance(power: number, table: PowerBands): { tolerance: number; rule: string } {
  const magnitude = Math.abs(power);
  let lower = 0;
  for (const band of table.bands) {
    if (magnitude <= band.upTo + EPS) {
      return {
        tolerance: band.plusMinus,
        rule: `±${band.plusMinus.toFixed(2)} D for ${lower.toFixed(2)}–${band.upTo.toFixed(2)} D`,
      };
    }
    lower = band.upTo;
  }
  return {
    tolerance: clean((magnitude * table.percent) / 100),
    rule: `±${table.percent}% above ${lower.toFixed(2)} D`,
  };
}

function axisDifference(a: number, b: number): number {
  const d = Math.abs(a - b) % 180;
  return Math.min(d, 180 - d);
}

function powerCheck(
  element: "sphere" | "cylinder" | "add" | "second meridian",
  ordered: number,
  measured: number,
  tol: { tolerance: number; rule: string },
  meridian: string,
): DispensingCheck {
  const difference = clean(measured - ordered);
  return {
    element,
    ordered,
    measured,
    difference,
    tolerance: tol.tolerance,
    applicable: true,
    pass: Math.abs(difference) <= tol.tolerance + EPS,
    rule: `${meridian}: ${tol.rule}`,
  };
}

/**
 * Full verification report for the UI: every element (sphere, cylinder,
 * axis, and add when one is ordered) with the ordered and measured values,
 * the tolerance applied and pass/fail. Both lenses are compared in
 * minus-cylinder form, as the standard's tables are written.
 *
 * @throws RxError when an add is ordered but none was measured, or on non-finite input.
 */
export function checkDispensingReport(
  ordered: LensRx,
  measured: LensRx,
  opts: { lensType?: LensType; standard?: DispensingStandard } = {},
): DispensingReport {
  assertSphCyl(ordered, "checkDispensing (ordered)");
  assertSphCyl(measured, "checkDispensing (measured)");
  const lensType = opts.lensType ?? "single-vision";
  const standard = opts.standard ?? "ANSI Z80.1-2015";
  const table = POWER_TOLERANCES[lensType === "progressive" ? "progressive" : "standard"];
  const o = toCylinderForm(ordered, "minus");
  const m = toCylinderForm(measured, "minus");

  let checks: DispensingCheck[];
  if (standard === "BS EN ISO 21987:2017") {
    const tol = isoPowerTolerances(o);
    checks = [
      powerCheck("sphere", o.sphere, m.sphere, tol.meridian, "Sphere meridian"),
      powerCheck(
        "second meridian",
        clean(o.sphere + o.cylinder),
        clean(m.sphere + m.cylinder),
        tol.meridian,
        "Cylinder meridian (sphere + cylinder)",
      ),
      powerCheck("cylinder", o.cylinder, m.cylinder, tol.cylinder, "Cylinder"),
    ];
  } else {
    checks = [
      powerCheck("sphere", o.sphere, m.sphere, powerTolerance(o.sphere, table.sphere), "Sphere meridian"),
      powerCheck("cylinder", o.cylinder, m.cylinder, powerTolerance(o.cylinder, table.cylinder), "Cylinder"),
    ];
  }

  const cylMagnitude = Math.abs(o.cylinder);
  const axisTol = axisTolerance(cylMagnitude, standard);
  const axis = {
    element: "axis" as const,
    ordered: o.axis,
    measured: m.axis,
    difference: axisDifference(o.axis, m.axis),
  };
  if (axisTol === null) {
    checks.push({
      ...axis,
      tolerance: null,
      applicable: false,
      pass: true,
      rule: "No axis tolerance for an ordered cylinder under 0.12 D",
    });
  } else if (m.cylinder === 0) {
    checks.push({
      ...axis,
      tolerance: axisTol,
      applicable: false,
      pass: true,
      rule: "Measured lens has no cylinder, so no axis; the cylinder check covers it",
    });
  } else {
    checks.push({
      ...axis,
      tolerance: axisTol,
      applicable: true,
      pass: axis.difference <= axisTol + EPS,
      rule: `±${axisTol}° for an ordered cylinder of ${cylMagnitude.toFixed(2)} D`,
    });
  }

  if (ordered.add !== undefined) {
    assertFinite(ordered.add, "Ordered add", "checkDispensing");
    if (measured.add === undefined) {
      throw new RxError(`An add of ${ordered.add.toFixed(2)} D was ordered but no measured add was given`);
    }
    assertFinite(measured.add, "Measured add", "checkDispensing");
    const addTol =
      Math.abs(ordered.add) <= ADD_LIMIT + EPS
        ? { tolerance: 0.12, rule: "±0.12 D for adds up to 4.00 D" }
        : { tolerance: 0.18, rule: "±0.18 D for adds above 4.00 D" };
    checks.push(powerCheck("add", ordered.add, measured.add, addTol, "Add"));
  }

  return { pass: checks.every((c) => c.pass), standard, lensType, checks };
}

/**
 * Checks a measured lens against the order with ANSI Z80.1-2015 tolerances:
 * sphere meridian, cylinder, axis (by ordered cylinder power) and add.
 * `pass` is true when nothing fails; `failures` lists each failing element
 * with the ordered and measured values (minus-cylinder form) and the
 * tolerance applied. See {@link checkDispensingReport} for every element.
 */
export function checkDispensing(
  ordered: LensRx,
  measured: LensRx,
  opts: { lensType?: LensType; standard?: DispensingStandard } = {},
): { pass: boolean; failures: DispensingFailure[] } {
  const report = checkDispensingReport(ordered, measured, opts);
  const failures: DispensingFailure[] = [];
  for (const c of report.checks) {
    if (!c.pass && c.tolerance !== null) {
      failures.push({ element: c.element, ordered: c.ordered, measured: c.measured, tolerance: c.tolerance });
    }
  }
  return { pass: failures.length === 0, failures };
}

// ------------------------------------------------------------------ the mounted pair: prism and centres

/** Prism as horizontal and vertical components with their bases (Δ); a zero component needs no base. */
export type PrismComponents = {
  horizontal: number;
  horizontalBase: "in" | "out" | null;
  vertical: number;
  verticalBase: "up" | "down" | null;
};

/** One eye of a mounted pair: what was ordered and what the lensmeter showed. */
export type PairEye = {
  ordered: LensRx;
  measured: LensRx;
  /** Prism ordered (none when absent). */
  orderedPrism?: PrismComponents | null;
  /** Prism read at the fitting / prism reference point; unchecked when absent. */
  measuredPrism?: PrismComponents | null;
  /** Ordered monocular PD and fitting height, mm. */
  orderedPdMm?: number | null;
  orderedHeightMm?: number | null;
  /** Where the optical centre (prism reference point) was found: monocular PD and height, mm. */
  measuredPdMm?: number | null;
  measuredHeightMm?: number | null;
};

export type PairElement =
  "horizontal prism" | "vertical prism" | "centre distance" | "centre height" | "height difference";

export type PairCheck = {
  element: PairElement;
  /** What was allowed (Δ or mm) and by how much the pair is off (unsigned). */
  difference: number;
  tolerance: number;
  unit: "Δ" | "mm";
  pass: boolean;
  rule: string;
};

export type PairReport = {
  pass: boolean;
  standard: DispensingStandard;
  right: DispensingReport;
  left: DispensingReport;
  pair: PairCheck[];
};

/**
 * Prismatic-imbalance limits of the mounted pair, by the stronger lens's power in the meridian
 * concerned. Up to `upToD` the limit is `prism` Δ; above it the limit is a displacement of `mm`
 * (checked in mm when the centres were measured, otherwise as the prism it induces by Prentice's rule).
 */
const IMBALANCE: Record<
  DispensingStandard,
  Record<"horizontal" | "vertical", { upToD: number; prism: number; mm: number }>
> = {
  // ANSI Z80.1-2015, published quick-reference summary (table "Tolerance on prismatic imbalance
  // (mounted)"): vertical 0.33 Δ to ±3.375 D, else 1.0 mm difference in PRP heights; horizontal
  // 0.67 Δ to ±2.75 D, else ±2.5 mm from the specified PD.
  "ANSI Z80.1-2015": {
    vertical: { upToD: 3.375, prism: 0.33, mm: 1 },
    horizontal: { upToD: 2.75, prism: 0.67, mm: 2.5 },
  },
  // BS EN ISO 21987:2017 — from memory, after published summaries of its prismatic-imbalance
  // table (not the standard's text): vertical 0.50 Δ to 5.00 D, else 1.0 mm; horizontal 0.67 Δ
  // to 3.25 D, else 2.0 mm. Each limit equals the other at the changeover by Prentice's rule.
  "BS EN ISO 21987:2017": {
    vertical: { upToD: 5, prism: 0.5, mm: 1 },
    horizontal: { upToD: 3.25, prism: 0.67, mm: 2 },
  },
};

/** Per-lens vertical position of the fitting point / segment: ±1.0 mm each (both standards). */
const HEIGHT_TOLERANCE_MM = 1; // ANSI Z80.1-2015 quick reference: segment / fitting-cross height ±1.0 mm each; ISO 21987 likewise (from memory)

function signedHorizontal(p: PrismComponents | null | undefined) {
  if (!p || !p.horizontal) return 0;
  return p.horizontalBase === "in" ? -p.horizontal : p.horizontal; // base out positive
}
function signedVertical(p: PrismComponents | null | undefined) {
  if (!p || !p.vertical) return 0;
  return p.verticalBase === "down" ? -p.vertical : p.vertical; // base up positive
}

function assertPrism(p: PrismComponents | null | undefined, what: string) {
  if (!p) return;
  assertFinite(p.horizontal, `${what} horizontal prism`, "checkMountedPair");
  assertFinite(p.vertical, `${what} vertical prism`, "checkMountedPair");
  if (p.horizontal < 0 || p.vertical < 0) throw new RxError(`${what}: give prism as a positive amount with its base`);
  if (p.horizontal > 0 && !p.horizontalBase) throw new RxError(`${what}: horizontal prism needs a base (in or out)`);
  if (p.vertical > 0 && !p.verticalBase) throw new RxError(`${what}: vertical prism needs a base (up or down)`);
}

const r2 = (x: number) => clean(Math.round(x * 100) / 100);

/**
 * Checks a mounted pair against the order: each lens's powers (as {@link checkDispensingReport}),
 * then the pair's prismatic imbalance (measured prism less ordered prism, horizontal as the sum of
 * both eyes' base-out errors, vertical as the difference of their base-up errors) and, when the
 * optical centres were located, their distance from the ordered monocular PDs and heights.
 */
export function checkMountedPair(
  right: PairEye,
  left: PairEye,
  opts: { lensType?: LensType; standard?: DispensingStandard } = {},
): PairReport {
  const standard = opts.standard ?? "ANSI Z80.1-2015";
  const r = checkDispensingReport(right.ordered, right.measured, { ...opts, standard });
  const l = checkDispensingReport(left.ordered, left.measured, { ...opts, standard });
  for (const [eye, e] of [
    ["Right", right],
    ["Left", left],
  ] as const) {
    assertPrism(e.orderedPrism, `${eye} ordered`);
    assertPrism(e.measuredPrism, `${eye} measured`);
    for (const [k, v] of [
      ["ordered PD", e.orderedPdMm],
      ["ordered height", e.orderedHeightMm],
      ["measured PD", e.measuredPdMm],
      ["measured height", e.measuredHeightMm],
    ] as const) {
      if (v !== null && v !== undefined) assertFinite(v, `${eye} ${k}`, "checkMountedPair");
    }
  }
  const limits = IMBALANCE[standard];
  const pair: PairCheck[] = [];
  const strongest = (meridian: number) =>
    Math.max(Math.abs(meridianPower(right.ordered, meridian)), Math.abs(meridianPower(left.ordered, meridian)));

  // Horizontal: power along the 180 meridian acts horizontally.
  const hPower = strongest(180);
  const hLimit = limits.horizontal;
  const centresMeasured = [right, left].every((e) => e.measuredPdMm != null && e.orderedPdMm != null);
  if (hPower > hLimit.upToD + 1e-9 && centresMeasured) {
    const off = Math.abs(right.measuredPdMm! + left.measuredPdMm! - right.orderedPdMm! - left.orderedPdMm!);
    pair.push({
      element: "centre distance",
      difference: r2(off),
      tolerance: hLimit.mm,
      unit: "mm",
      pass: off <= hLimit.mm + EPS,
      rule: `Lenses over ${hLimit.upToD} D horizontally: centres within ${hLimit.mm} mm of the ordered PD in all (${standard})`,
    });
  } else if (right.measuredPrism && left.measuredPrism) {
    const err =
      signedHorizontal(right.measuredPrism) -
      signedHorizontal(right.orderedPrism) +
      signedHorizontal(left.measuredPrism) -
      signedHorizontal(left.orderedPrism);
    const strong = hPower > hLimit.upToD + 1e-9;
    const tolerance = strong ? r2((hLimit.mm / 10) * hPower) : hLimit.prism; // Prentice: P = c (cm) × F
    pair.push({
      element: "horizontal prism",
      difference: r2(Math.abs(err)),
      tolerance,
      unit: "Δ",
      pass: Math.abs(err) <= tolerance + EPS,
      rule: strong
        ? `${hLimit.mm} mm at ${hPower.toFixed(2)} D by Prentice's rule = ${tolerance.toFixed(2)} Δ (${standard})`
        : `Horizontal imbalance ${hLimit.prism} Δ for lenses up to ${hLimit.upToD} D (${standard})`,
    });
  }

  const vPower = strongest(90);
  const vLimit = limits.vertical;
  const heightsMeasured = [right, left].every((e) => e.measuredHeightMm != null && e.orderedHeightMm != null);
  if (right.measuredPrism && left.measuredPrism && !(vPower > vLimit.upToD + 1e-9 && heightsMeasured)) {
    const err =
      signedVertical(right.measuredPrism) -
      signedVertical(right.orderedPrism) -
      (signedVertical(left.measuredPrism) - signedVertical(left.orderedPrism));
    const strong = vPower > vLimit.upToD + 1e-9;
    const tolerance = strong ? r2((vLimit.mm / 10) * vPower) : vLimit.prism;
    pair.push({
      element: "vertical prism",
      difference: r2(Math.abs(err)),
      tolerance,
      unit: "Δ",
      pass: Math.abs(err) <= tolerance + EPS,
      rule: strong
        ? `${vLimit.mm} mm at ${vPower.toFixed(2)} D by Prentice's rule = ${tolerance.toFixed(2)} Δ (${standard})`
        : `Vertical imbalance ${vLimit.prism} Δ for lenses up to ${vLimit.upToD} D (${standard})`,
    });
  }
  if (heightsMeasured) {
    const diff = Math.abs(
      right.measuredHeightMm! - right.orderedHeightMm! - (left.measuredHeightMm! - left.orderedHeightMm!),
    );
    pair.push({
      element: "height difference",
      difference: r2(diff),
      tolerance: vLimit.mm,
      unit: "mm",
      pass: diff <= vLimit.mm + EPS,
      rule: `Difference between the two centres' height errors at most ${vLimit.mm} mm (${standard})`,
    });
    for (const [eye, e] of [
      ["Right", right],
      ["Left", left],
    ] as const) {
      const off = Math.abs(e.measuredHeightMm! - e.orderedHeightMm!);
      pair.push({
        element: "centre height",
        difference: r2(off),
        tolerance: HEIGHT_TOLERANCE_MM,
        unit: "mm",
        pass: off <= HEIGHT_TOLERANCE_MM + EPS,
        rule: `${eye}: height within ±${HEIGHT_TOLERANCE_MM} mm of the ordered fitting height`,
      });
    }
  }
  return { pass: r.pass && l.pass && pair.every((c) => c.pass), standard, right: r, left: l, pair };
}
