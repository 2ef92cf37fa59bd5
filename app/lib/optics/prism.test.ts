import fc from "fast-check";
import { describe, expect, it } from "vitest";
import {
  decentrationPrism,
  inducedPrism,
  meridianPower,
  prenticePrism,
  RxError,
  verticalImbalance,
  type SphCyl,
} from "./index";
import { realRx } from "./test-arbitraries";

const rx = (sphere: number, cylinder = 0, axis = 180): SphCyl => ({ sphere, cylinder, axis });

describe("prenticePrism P = |F| × c (cm)", () => {
  it("4.00 D decentred 5 mm gives 2Δ (Prentice 1890; standard textbook example)", () => {
    expect(prenticePrism(4, 5)).toBe(2);
    expect(prenticePrism(-4, 5)).toBe(2);
  });

  it("matches further hand calculations", () => {
    expect(prenticePrism(6.5, 3)).toBe(1.95);
    expect(prenticePrism(0, 10)).toBe(0);
  });

  it("rejects non-finite input", () => {
    expect(() => prenticePrism(Number.NaN, 2)).toThrow(RxError);
  });
});

describe("inducedPrism base direction", () => {
  // Plus lenses act as prisms base to base (base toward the optical centre), minus lenses apex to apex
  // (common practice): plus decentred in → base in; minus decentred in → base out.
  it.each([
    [4, 5, "in", { prism: 2, base: "in" }],
    [-4, 5, "in", { prism: 2, base: "out" }],
    [2, 3, "up", { prism: 0.6, base: "up" }],
    [-2, 3, "up", { prism: 0.6, base: "down" }],
    [3, 2, "out", { prism: 0.6, base: "out" }],
    [-3, 2, "down", { prism: 0.6, base: "up" }],
    [0, 5, "in", { prism: 0, base: null }],
  ] as const)("%s D decentred %s mm %s", (power, mm, direction, expected) => {
    expect(inducedPrism(power, mm, direction)).toEqual(expected);
  });

  it("rejects negative decentration and unknown directions", () => {
    expect(() => inducedPrism(2, -1, "in")).toThrow(/must not be negative/);
    // @ts-expect-error checking a runtime value outside the type
    expect(() => inducedPrism(2, 1, "sideways")).toThrow(/Unknown decentration direction/);
  });
});

describe("decentrationPrism (matrix form, Long 1976)", () => {
  it("for a sphere matches inducedPrism in both eyes", () => {
    for (const eye of ["right", "left"] as const) {
      const p = decentrationPrism(rx(4), eye, { inMm: 5, upMm: 0 });
      expect(p.horizontal).toEqual({ prism: 2, base: "in" });
      expect(p.vertical).toEqual({ prism: 0, base: null });
      expect(p.resultant).toBe(2);
    }
    expect(decentrationPrism(rx(-4), "left", { inMm: -5, upMm: 0 }).horizontal).toEqual({ prism: 2, base: "in" });
  });

  it("an oblique cylinder gives prism in both directions (hand calculation)", () => {
    // plano −2.00 × 45: Fxx = −1, Fxy = +1, Fyy = −1. Centre 5 mm up: P = F·(0, 0.5) = (+0.5, −0.5).
    const right = decentrationPrism(rx(0, -2, 45), "right", { inMm: 0, upMm: 5 });
    expect(right.horizontal).toEqual({ prism: 0.5, base: "in" });
    expect(right.vertical).toEqual({ prism: 0.5, base: "down" });
    expect(right.resultant).toBeCloseTo(Math.SQRT1_2, 9);
    // Same lens before the left eye: +x is temporal there.
    expect(decentrationPrism(rx(0, -2, 45), "left", { inMm: 0, upMm: 5 }).horizontal).toEqual({
      prism: 0.5,
      base: "out",
    });
  });

  it("vertical decentration gives Prentice's rule with the vertical-meridian power", () => {
    fc.assert(
      fc.property(realRx, fc.integer({ min: 1, max: 15 }), (lens, mm) => {
        const p = decentrationPrism(lens, "right", { inMm: 0, upMm: mm });
        const expected = (meridianPower(lens, 90) * mm) / 10;
        expect(p.vertical.prism).toBeCloseTo(Math.abs(expected), 8);
        if (Math.abs(expected) > 1e-8) expect(p.vertical.base).toBe(expected > 0 ? "up" : "down");
      }),
      { numRuns: 500 },
    );
  });

  it("for a sphere the resultant is Prentice's rule on the full decentration", () => {
    fc.assert(
      fc.property(
        fc.double({ min: -20, max: 20, noNaN: true }),
        fc.integer({ min: -10, max: 10 }),
        fc.integer({ min: -10, max: 10 }),
        (s, inMm, upMm) => {
          const p = decentrationPrism(rx(s), "left", { inMm, upMm });
          expect(p.resultant).toBeCloseTo(prenticePrism(s, Math.hypot(inMm, upMm)), 8);
        },
      ),
      { numRuns: 500 },
    );
  });

  it("rejects a bad eye", () => {
    // @ts-expect-error checking a runtime value outside the type
    expect(() => decentrationPrism(rx(1), "both", { inMm: 1, upMm: 0 })).toThrow(/Eye must be "right" or "left"/);
  });
});

describe("verticalImbalance at the reading level", () => {
  it("R +1.00, L +3.00, 10 mm below: 2Δ, the left eye relatively base up (Prentice; hand calculation)", () => {
    const v = verticalImbalance(rx(1), rx(3));
    expect(v.right).toEqual({ prism: 1, base: "up" });
    expect(v.left).toEqual({ prism: 3, base: "up" });
    expect(v.imbalance).toBe(2);
    expect(v.netBaseLeft).toBe("up");
    expect(v.netBaseRight).toBe("down");
    expect(v.readingDropMm).toBe(10);
  });

  it("R −2.00, L −4.00: 2Δ, left relatively base down", () => {
    const v = verticalImbalance(rx(-2), rx(-4));
    expect(v.imbalance).toBe(2);
    expect(v.right).toEqual({ prism: 2, base: "down" });
    expect(v.netBaseLeft).toBe("down");
    expect(v.netBaseRight).toBe("up");
  });

  it("uses the vertical-meridian power of a cylinder", () => {
    // R −1.00 −2.00 × 180 has F(90) = −3.00 D; L −1.00 DS. At 8 mm: 2.4Δ vs 0.8Δ base down.
    const v = verticalImbalance(rx(-1, -2, 180), rx(-1), 8);
    expect(v.right).toEqual({ prism: 2.4, base: "down" });
    expect(v.left).toEqual({ prism: 0.8, base: "down" });
    expect(v.imbalance).toBe(1.6);
    expect(v.netBaseRight).toBe("down");
  });

  it("is zero for equal lenses", () => {
    const v = verticalImbalance(rx(-3, -1, 90), rx(-3, -1, 90));
    expect(v.imbalance).toBe(0);
    expect(v.netBaseRight).toBeNull();
    expect(v.netBaseLeft).toBeNull();
  });

  it("rejects a negative drop", () => {
    expect(() => verticalImbalance(rx(1), rx(1), -2)).toThrow(/Reading drop must not be negative/);
  });
});
