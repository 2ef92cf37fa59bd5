/**
 * Effective-power (vertex distance) conversion.
 */
import { assertFinite, assertSphCyl, noNegativeZero, normaliseAxis, RxError, signed, type SphCyl } from "./core";

/**
 * Smallest allowed value of 1 − d·F. At 0 the lens's focal point lies in the
 * new plane and no lens there is equivalent; near 0 the result would be more
 * than a hundred times the original power, which no real lens is.
 */
const MIN_DENOMINATOR = 0.01;

function convertMeridian(power: number, dMetres: number, fromMm: number, toMm: number): number {
  const denominator = 1 - dMetres * power;
  if (denominator <= MIN_DENOMINATOR) {
    throw new RxError(
      `Vertex conversion of meridian power ${signed(power)} D from ${fromMm} mm to ${toMm} mm is undefined: ` +
        "the lens's focal point lies at or too near the new plane",
    );
  }
  return power / denominator;
}

/**
 * Power needed at a new vertex distance for the same correction, meridian by
 * meridian: F' = F / (1 − d·F) with d = (fromMm − toMm) / 1000 metres (the
 * standard effective-power formula; e.g. −10.00 D at 12 mm becomes −8.93 D at
 * the cornea).
 *
 * Distances are measured from the corneal apex (0 = contact-lens plane).
 * The result is exact (not rounded) in minus-cylinder form; round it with
 * roundRx for dispensing.
 *
 * @throws RxError on negative or non-finite distances, or when 1 − d·F ≤ 0.01.
 */
export function vertexConvert(rx: SphCyl, fromMm: number, toMm: number): SphCyl {
  assertSphCyl(rx, "vertexConvert");
  assertFinite(fromMm, "Vertex distance fromMm", "vertexConvert");
  assertFinite(toMm, "Vertex distance toMm", "vertexConvert");
  if (fromMm < 0 || toMm < 0) {
    throw new RxError(`Vertex distances must not be negative (got ${fromMm} mm and ${toMm} mm) in vertexConvert`);
  }
  const d = (fromMm - toMm) / 1000;
  const alongAxis = convertMeridian(rx.sphere, d, fromMm, toMm);
  if (rx.cylinder === 0) return { sphere: noNegativeZero(alongAxis), cylinder: 0, axis: 180 };
  const across = convertMeridian(rx.sphere + rx.cylinder, d, fromMm, toMm);
  const cylinder = across - alongAxis;
  if (cylinder === 0) return { sphere: noNegativeZero(alongAxis), cylinder: 0, axis: 180 };
  // Minus-cylinder form: the sphere is the more plus meridian, the axis lies along it.
  return cylinder < 0
    ? { sphere: noNegativeZero(alongAxis), cylinder, axis: normaliseAxis(rx.axis) }
    : { sphere: noNegativeZero(across), cylinder: -cylinder, axis: normaliseAxis(rx.axis + 90) };
}
