/**
 * Shared types, the engine's input error and the small numeric helpers used
 * by every optics module. Plain TypeScript: no framework, no Node APIs.
 *
 * Units throughout the engine: dioptres (D), degrees, millimetres and prism
 * dioptres (Δ). Axes follow the standard (TABO) notation: degrees 1..180,
 * counter-clockwise as the examiner faces the patient, 180 (never 0) for the
 * horizontal.
 */

/**
 * A sphero-cylindrical lens or refraction. `axis` is an integer 1..180 when
 * `cylinder` is non-zero; a pure sphere has `cylinder` 0 and `axis` 180.
 */
export type SphCyl = { sphere: number; cylinder: number; axis: number };

/** Which sign of cylinder a prescription is written in. */
export type CylinderForm = "minus" | "plus";

/**
 * Thrown on bad input anywhere in the engine. The message names the problem
 * and the offending part of the input.
 */
export class RxError extends Error {
  override name = "RxError";
}

/**
 * Removes floating-point noise (by default below 1e-9, far below any clinical
 * resolution) and turns -0 into 0. Intermediate quantities that feed further
 * arithmetic use a finer `scale` (1e12) so the final 1e-9 cleaning is exact.
 */
export function clean(x: number, scale = 1e9): number {
  const r = Math.round(x * scale) / scale;
  return r === 0 ? 0 : r;
}

/** Turns -0 into 0 and leaves every other value untouched. */
export function noNegativeZero(x: number): number {
  return x === 0 ? 0 : x;
}

/**
 * Brings any finite angle to the integer axis range 1..180 (0 and 180 are the
 * same meridian; 180 is the written form).
 */
export function normaliseAxis(degrees: number): number {
  const m = Math.round(degrees) % 180;
  return m <= 0 ? m + 180 : m;
}

/** Throws RxError unless `value` is a finite number. */
export function assertFinite(value: unknown, what: string, where: string): asserts value is number {
  if (typeof value !== "number" || !Number.isFinite(value)) {
    throw new RxError(`${what} must be a finite number (got ${String(value)}) in ${where}`);
  }
}

/** Throws RxError unless every field of the sphero-cylinder is a finite number. */
export function assertSphCyl(rx: SphCyl, where: string): void {
  if (rx === null || typeof rx !== "object") {
    throw new RxError(`A prescription object is required in ${where}`);
  }
  assertFinite(rx.sphere, "Sphere", where);
  assertFinite(rx.cylinder, "Cylinder", where);
  assertFinite(rx.axis, "Axis", where);
}

/** Shortens user text quoted inside error messages. */
export function quote(text: string): string {
  const max = 80;
  return `"${text.length > max ? `${text.slice(0, max)}…` : text}"`;
}

/** Formats a power with its sign and two decimals, e.g. "+1.25", "-0.50". */
export function signed(value: number): string {
  const body = Math.abs(value).toFixed(2);
  if (body === "0.00") return "0.00";
  return `${value > 0 ? "+" : "-"}${body}`;
}
