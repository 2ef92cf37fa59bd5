/**
 * Verification of finished spectacle lenses against the order, using the
 * tolerances of ANSI Z80.1-2015 (American National Standard for Ophthalmics —
 * Prescription Ophthalmic Lenses — Recommendations).
 *
 * The tolerance values below are taken from published quick-reference
 * summaries of ANSI Z80.1-2015 (tables for distance refractive power, cylinder
 * axis and addition power); the text of the standard itself was not consulted.
 * As in those tables, powers are compared in minus-cylinder convention and the
 * sphere tolerance applies to the sphere meridian (earlier editions, e.g.
 * Z80.1-1999, used the meridian of highest absolute power instead).
 */
import { assertSphCyl, assertFinite, clean, RxError, type SphCyl } from "./core";
import { toCylinderForm } from "./rx";

/** A spectacle lens order or measurement: sphero-cylinder plus optional reading addition. */
export type LensRx = SphCyl & { add?: number };

/** Lens families with separate power tolerances in Z80.1-2015. */
export type LensType = "single-vision" | "multifocal" | "progressive";

/** The lens elements Z80.1 sets tolerances for. */
export type DispensingElement = "sphere" | "cylinder" | "axis" | "add";

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
  standard: "ANSI Z80.1-2015";
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
    cylinder: { bands: [{ upTo: 2, plusMinus: 0.13 }, { upTo: 4.5, plusMinus: 0.15 }], percent: 4 },
  },
  progressive: {
    sphere: { bands: [{ upTo: 8, plusMinus: 0.16 }], percent: 2 },
    cylinder: { bands: [{ upTo: 2, plusMinus: 0.16 }, { upTo: 3.5, plusMinus: 0.18 }], percent: 5 },
  },
};

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

function axisTolerance(cylinderMagnitude: number): number | null {
  if (cylinderMagnitude < AXIS_MIN_CYLINDER - EPS) return null;
  const band = AXIS_TOLERANCES.find((b) => cylinderMagnitude <= b.upTo + EPS);
  return band ? band.degrees : AXIS_TOLERANCE_ABOVE_1_50;
}

function powerTolerance(power: number, table: PowerBands): { tolerance: number; rule: string } {
  const magnitude = Math.abs(power);
  let lower = 0;
  for (const band of table.bands) {
    if (magnitude <= band.upTo + EPS) {
      return { tolerance: band.plusMinus, rule: `±${band.plusMinus.toFixed(2)} D for ${lower.toFixed(2)}–${band.upTo.toFixed(2)} D` };
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

function powerCheck(element: "sphere" | "cylinder" | "add", ordered: number, measured: number, tol: { tolerance: number; rule: string }, meridian: string): DispensingCheck {
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
  opts: { lensType?: LensType } = {},
): DispensingReport {
  assertSphCyl(ordered, "checkDispensing (ordered)");
  assertSphCyl(measured, "checkDispensing (measured)");
  const lensType = opts.lensType ?? "single-vision";
  const table = POWER_TOLERANCES[lensType === "progressive" ? "progressive" : "standard"];
  const o = toCylinderForm(ordered, "minus");
  const m = toCylinderForm(measured, "minus");

  const checks: DispensingCheck[] = [
    powerCheck("sphere", o.sphere, m.sphere, powerTolerance(o.sphere, table.sphere), "Sphere meridian"),
    powerCheck("cylinder", o.cylinder, m.cylinder, powerTolerance(o.cylinder, table.cylinder), "Cylinder"),
  ];

  const cylMagnitude = Math.abs(o.cylinder);
  const axisTol = axisTolerance(cylMagnitude);
  const axis = { element: "axis" as const, ordered: o.axis, measured: m.axis, difference: axisDifference(o.axis, m.axis) };
  if (axisTol === null) {
    checks.push({
      ...axis, tolerance: null, applicable: false, pass: true,
      rule: "No axis tolerance for an ordered cylinder under 0.12 D",
    });
  } else if (m.cylinder === 0) {
    checks.push({
      ...axis, tolerance: axisTol, applicable: false, pass: true,
      rule: "Measured lens has no cylinder, so no axis; the cylinder check covers it",
    });
  } else {
    checks.push({
      ...axis, tolerance: axisTol, applicable: true, pass: axis.difference <= axisTol + EPS,
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

  return { pass: checks.every((c) => c.pass), standard: "ANSI Z80.1-2015", lensType, checks };
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
  opts: { lensType?: LensType } = {},
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
