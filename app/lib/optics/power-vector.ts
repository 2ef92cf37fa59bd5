/**
 * Power-vector arithmetic on sphero-cylinders.
 *
 * Source for every formula here: Thibos LN, Wheeler W, Horner D. Power
 * vectors: an application of Fourier analysis to the description and
 * statistical analysis of refractive error. Optom Vis Sci 1997;74(6):367–375.
 */
import { assertFinite, assertSphCyl, clean, normaliseAxis, RxError, type CylinderForm, type SphCyl } from "./core";
import { transpose } from "./rx";

/**
 * A refraction as a vector (M, J0, J45) in dioptres: M is the spherical
 * equivalent, J0 and J45 the Jackson cross-cylinder components at 0°/90° and
 * 45°/135°.
 */
export type PowerVector = { M: number; J0: number; J45: number };

const RAD = Math.PI / 180;

/** Below this cross-cylinder magnitude (D) a lens is treated as a sphere. */
const SPHERE_LIMIT = 1e-9;

/** Power vectors feed further arithmetic, so their noise is cleaned at 1e-12 D. */
const FINE = 1e12;

/**
 * Sphero-cylinder to power vector (Thibos et al. 1997):
 * M = S + C/2, J0 = −(C/2)·cos 2α, J45 = −(C/2)·sin 2α.
 * Components are cleaned of float noise below 1e-12 D.
 */
export function toPowerVector(rx: SphCyl): PowerVector {
  assertSphCyl(rx, "toPowerVector");
  const halfC = rx.cylinder / 2;
  const twoAlpha = 2 * rx.axis * RAD;
  return {
    M: clean(rx.sphere + halfC, FINE),
    J0: clean(-halfC * Math.cos(twoAlpha), FINE),
    J45: clean(-halfC * Math.sin(twoAlpha), FINE),
  };
}

/**
 * Power vector back to a sphero-cylinder (inverse of Thibos et al. 1997):
 * in minus-cylinder form C = −2·√(J0² + J45²), S = M − C/2,
 * α = ½·atan2(J45, J0). The axis is rounded to the nearest whole degree
 * (1..180); a vector with no cross-cylinder part gives a sphere (axis 180).
 *
 * @param form cylinder form of the result (default "minus")
 */
export function fromPowerVector(pv: PowerVector, form: CylinderForm = "minus"): SphCyl {
  if (pv === null || typeof pv !== "object") throw new RxError("A power vector is required in fromPowerVector");
  assertFinite(pv.M, "M", "fromPowerVector");
  assertFinite(pv.J0, "J0", "fromPowerVector");
  assertFinite(pv.J45, "J45", "fromPowerVector");
  const r = Math.sqrt(pv.J0 * pv.J0 + pv.J45 * pv.J45);
  if (r < SPHERE_LIMIT) return { sphere: clean(pv.M), cylinder: 0, axis: 180 };
  const minus: SphCyl = {
    sphere: clean(pv.M + r),
    cylinder: clean(-2 * r),
    axis: normaliseAxis((0.5 * Math.atan2(pv.J45, pv.J0)) / RAD),
  };
  return form === "plus" ? transpose(minus) : minus;
}

/**
 * Blur strength B = √(M² + J0² + J45²), the length of the power vector
 * (Thibos et al. 1997).
 */
export function blurStrength(pv: PowerVector): number {
  if (pv === null || typeof pv !== "object") throw new RxError("A power vector is required in blurStrength");
  assertFinite(pv.M, "M", "blurStrength");
  assertFinite(pv.J0, "J0", "blurStrength");
  assertFinite(pv.J45, "J45", "blurStrength");
  return clean(Math.sqrt(pv.M * pv.M + pv.J0 * pv.J0 + pv.J45 * pv.J45));
}

/** Result of {@link compareRx}. */
export type RxComparison = { delta: PowerVector; magnitude: number };

/**
 * Difference between two refractions as a power vector, delta = pv(b) − pv(a),
 * and its length (the dioptric distance between them; Thibos et al. 1997).
 */
export function compareRx(a: SphCyl, b: SphCyl): RxComparison {
  const pa = toPowerVector(a);
  const pb = toPowerVector(b);
  const delta = { M: clean(pb.M - pa.M, FINE), J0: clean(pb.J0 - pa.J0, FINE), J45: clean(pb.J45 - pa.J45, FINE) };
  return { delta, magnitude: blurStrength(delta) };
}

/**
 * Sum of two thin sphero-cylinders in contact, including obliquely crossed
 * cylinders. Power vectors (like dioptric power matrices, of which they are a
 * linear transform) add for thin lenses in contact (Thibos et al. 1997;
 * Harris WF's dioptric power matrix). Result in minus-cylinder form with the
 * axis rounded to a whole degree.
 */
export function combine(a: SphCyl, b: SphCyl): SphCyl {
  const pa = toPowerVector(a);
  const pb = toPowerVector(b);
  return fromPowerVector({ M: pa.M + pb.M, J0: pa.J0 + pb.J0, J45: pa.J45 + pb.J45 }, "minus");
}

/**
 * Smallest dioptric (power-vector) difference between two refractions that
 * the exam screen flags as a meaningful change, in dioptres.
 */
export const MEANINGFUL_CHANGE_D = 0.5;

/** The rule behind {@link MEANINGFUL_CHANGE_D}, for display beside the flag. */
export const MEANINGFUL_CHANGE_RULE =
  "Change flagged when the power-vector (dioptric) difference between two refractions is 0.50 D or more " +
  "(common practice). Test–retest repeatability of subjective refraction is about ±0.25–0.50 D " +
  "(Bullimore MA, Fusaro RE, Adams CW. The repeatability of automated and clinician refraction. " +
  "Optom Vis Sci 1998;75:617–622 — from memory), so smaller differences are within measurement noise.";

/** True when a {@link compareRx} result reaches {@link MEANINGFUL_CHANGE_D}. */
export function isMeaningfulChange(comparison: { magnitude: number }): boolean {
  assertFinite(comparison?.magnitude, "Comparison magnitude", "isMeaningfulChange");
  return comparison.magnitude >= MEANINGFUL_CHANGE_D - 1e-9;
}
