import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { RxError, roundRx, toCylinderForm, vertexConvert, type SphCyl } from "./index";
import { realRx } from "./test-arbitraries";

const rx = (sphere: number, cylinder = 0, axis = 180): SphCyl => ({ sphere, cylinder, axis });

describe("vertexConvert F' = F / (1 − dF), d = (from − to)/1000 m", () => {
  it("−10.00 D at 12 mm is −8.93 D at the cornea (standard textbook example; common practice)", () => {
    const c = vertexConvert(rx(-10), 12, 0);
    expect(c.sphere).toBeCloseTo(-8.9286, 4);
    expect(roundRx(c)).toEqual(rx(-9));
  });

  it("+10.00 D at 12 mm is +11.36 D at the cornea (standard textbook example; common practice)", () => {
    expect(vertexConvert(rx(10), 12, 0).sphere).toBeCloseTo(11.3636, 4);
  });

  it("is exact, not rounded", () => {
    expect(vertexConvert(rx(-10), 12, 0).sphere).toBe(-10 / (1 - 0.012 * -10));
    expect(vertexConvert(rx(4.25), 14, 10).sphere).toBe(4.25 / (1 - 0.004 * 4.25));
  });

  it("converts a toric lens meridian by meridian (hand calculation)", () => {
    // −6.00 → −6/1.072 = −5.5970; −8.00 → −8/1.096 = −7.2993; cylinder −1.7023 at the same axis.
    const c = vertexConvert(rx(-6, -2, 180), 12, 0);
    expect(c.sphere).toBeCloseTo(-5.597015, 6);
    expect(c.cylinder).toBeCloseTo(-7.29927 + 5.597015, 5);
    expect(c.axis).toBe(180);
  });

  it("returns minus-cylinder form for plus-cylinder input", () => {
    // +2.00 +1.00 × 90: meridians +2.00 @90 → 2/0.976, +3.00 @180 → 3/0.964 (hand calculation).
    const c = vertexConvert(rx(2, 1, 90), 12, 0);
    expect(c.sphere).toBeCloseTo(3 / 0.964, 9);
    expect(c.cylinder).toBeCloseTo(2 / 0.976 - 3 / 0.964, 9);
    expect(c.axis).toBe(180);
  });

  it("moving a lens away from the eye works the other way", () => {
    // A −4.00 D contact lens prescription at 0 mm needs −4/(1 − (−0.012)(−4)) = −4.2017 D at 12 mm.
    expect(vertexConvert(rx(-4), 0, 12).sphere).toBeCloseTo(-4 / 0.952, 9);
  });

  it("there and back is the identity", () => {
    fc.assert(
      fc.property(realRx, fc.integer({ min: 0, max: 20 }), fc.integer({ min: 0, max: 20 }), (input, from, to) => {
        const back = vertexConvert(vertexConvert(input, from, to), to, from);
        const expected = toCylinderForm(input, "minus");
        expect(back.sphere).toBeCloseTo(expected.sphere, 9);
        expect(back.cylinder).toBeCloseTo(expected.cylinder, 9);
        if (Math.abs(expected.cylinder) > 1e-6) expect(back.axis).toBe(expected.axis);
      }),
      { numRuns: 1000 },
    );
  });

  it("gives no -0 and a sphere axis of 180", () => {
    const c = vertexConvert(rx(-0, 0, 90), 12, 0);
    expect(Object.is(c.sphere, 0)).toBe(true);
    expect(c).toEqual(rx(0));
  });

  it("throws RxError when the focal point falls at or near the new plane", () => {
    expect(() => vertexConvert(rx(30), 40, 5)).toThrow(RxError);
    expect(() => vertexConvert(rx(30), 40, 5)).toThrow(/is undefined: the lens's focal point lies at or too near/);
    expect(() => vertexConvert(rx(-1, -29, 90), 0, 40)).toThrow(/meridian power -30\.00 D/);
  });

  it("rejects negative or non-finite distances", () => {
    expect(() => vertexConvert(rx(-2), -1, 0)).toThrow(/must not be negative/);
    expect(() => vertexConvert(rx(-2), 12, Number.NaN)).toThrow(/toMm must be a finite number/);
  });
});
