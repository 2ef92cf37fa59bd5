/**
 * fast-check generators shared by the optics tests (test support only; not
 * exported from the engine).
 */
import fc from "fast-check";
import type { SphCyl } from "./core";

/** Multiples of `step` between min and max (inclusive), exact in binary for step 0.25. */
export function stepped(min: number, max: number, step: number): fc.Arbitrary<number> {
  return fc
    .integer({ min: Math.ceil(min / step), max: Math.floor(max / step) })
    .map((k) => (k * step === 0 ? 0 : k * step));
}

/** Integer axis 1..180. */
export const axis = fc.integer({ min: 1, max: 180 });

function build(sphere: number, cylinder: number, ax: number): SphCyl {
  return cylinder === 0 ? { sphere, cylinder: 0, axis: 180 } : { sphere, cylinder, axis: ax };
}

/** Prescriptions on the 0.25 D grid, either cylinder form. */
export const quarterRx: fc.Arbitrary<SphCyl> = fc
  .tuple(stepped(-20, 20, 0.25), stepped(-6, 6, 0.25), axis)
  .map(([s, c, a]) => build(s, c, a));

/** Prescriptions on a 0.01 D grid (off-step values such as -2.12), either cylinder form. */
export const centiRx: fc.Arbitrary<SphCyl> = fc
  .tuple(fc.integer({ min: -2000, max: 2000 }), fc.integer({ min: -600, max: 600 }), axis)
  .map(([s, c, a]) => build(s / 100 + 0, c / 100 + 0, a));

/** Real-valued powers with an integer axis; cylinders are 0 or at least 0.01 D in magnitude. */
export const realRx: fc.Arbitrary<SphCyl> = fc
  .tuple(
    fc.double({ min: -20, max: 20, noNaN: true, noDefaultInfinity: true }),
    fc.oneof(
      fc.constant(0),
      fc.double({ min: 0.01, max: 8, noNaN: true }),
      fc.double({ min: -8, max: -0.01, noNaN: true }),
    ),
    axis,
  )
  .map(([s, c, a]) => build(s + 0, c, a));
