import fc from "fast-check";
import { describe, expect, it } from "vitest";
import {
  MEANINGFUL_CHANGE_D,
  blurStrength,
  combine,
  compareRx,
  fromPowerVector,
  isMeaningfulChange,
  RxError,
  toCylinderForm,
  toPowerVector,
  transpose,
  type SphCyl,
} from "./index";
import { axis, quarterRx, realRx, stepped } from "./test-arbitraries";

const rx = (sphere: number, cylinder = 0, ax = 180): SphCyl => ({ sphere, cylinder, axis: ax });
const RAD = Math.PI / 180;

/**
 * Independent oracle: the dioptric power matrix of a sphero-cylinder,
 * F = [[S + C sin²α, −C sinα cosα], [−C sinα cosα, S + C cos²α]]
 * (Long WF. A matrix formalism for decentration problems. Am J Optom Physiol
 * Opt 1976;53:27–33; Harris WF's dioptric power matrix). Its power vector is
 * M = (Fxx + Fyy)/2, J0 = (Fxx − Fyy)/2, J45 = Fxy.
 */
function powerMatrix({ sphere: S, cylinder: C, axis: a }: SphCyl) {
  const s = Math.sin(a * RAD);
  const c = Math.cos(a * RAD);
  return { xx: S + C * s * s, xy: -C * s * c, yy: S + C * c * c };
}

/** Sphere and cylinder (minus form) of a matrix from its eigenvalues. */
function eigenSphCyl(m: { xx: number; xy: number; yy: number }) {
  const mean = (m.xx + m.yy) / 2;
  const radius = Math.sqrt(((m.xx - m.yy) / 2) ** 2 + m.xy ** 2);
  return { sphere: mean + radius, cylinder: -2 * radius };
}

/** Meridian (0–180°, 0.01° steps) in which a matrix has the greatest power: the minus-cylinder axis. */
function axisByScan(m: { xx: number; xy: number; yy: number }): number {
  let best = 0;
  let bestPower = -Infinity;
  for (let k = 0; k < 18000; k++) {
    const t = (k / 100) * RAD;
    const power = m.xx * Math.cos(t) ** 2 + 2 * m.xy * Math.sin(t) * Math.cos(t) + m.yy * Math.sin(t) ** 2;
    if (power > bestPower) {
      bestPower = power;
      best = k / 100;
    }
  }
  return best;
}

function axisGap(a: number, b: number): number {
  const d = Math.abs(a - b) % 180;
  return Math.min(d, 180 - d);
}

describe("toPowerVector (Thibos, Wheeler & Horner 1997)", () => {
  // Hand calculations from M = S + C/2, J0 = −(C/2)cos 2α, J45 = −(C/2)sin 2α (Thibos et al. 1997).
  it.each([
    [rx(-2, -1, 180), { M: -2.5, J0: 0.5, J45: 0 }],
    [rx(-1, -1, 90), { M: -1.5, J0: -0.5, J45: 0 }],
    [rx(1, -2, 45), { M: 0, J0: 0, J45: 1 }],
    [rx(1, -2, 135), { M: 0, J0: 0, J45: -1 }],
    [rx(-3), { M: -3, J0: 0, J45: 0 }],
    [rx(0.5, 1, 30), { M: 1, J0: -0.25, J45: -Math.sqrt(3) / 4 }],
  ])("%j", (input, expected) => {
    const pv = toPowerVector(input);
    expect(pv.M).toBeCloseTo(expected.M, 12);
    expect(pv.J0).toBeCloseTo(expected.J0, 9);
    expect(pv.J45).toBeCloseTo(expected.J45, 9);
  });

  it("agrees with the dioptric power matrix oracle (Long 1976)", () => {
    fc.assert(
      fc.property(realRx, (input) => {
        const pv = toPowerVector(input);
        const m = powerMatrix(input);
        expect(pv.M).toBeCloseTo((m.xx + m.yy) / 2, 8);
        expect(pv.J0).toBeCloseTo((m.xx - m.yy) / 2, 8);
        expect(pv.J45).toBeCloseTo(m.xy, 8);
      }),
      { numRuns: 1000 },
    );
  });

  it("is the same for both cylinder forms of one lens", () => {
    fc.assert(
      fc.property(quarterRx, (input) => {
        const a = toPowerVector(input);
        const b = toPowerVector(transpose(input));
        expect(b.M).toBeCloseTo(a.M, 10);
        expect(b.J0).toBeCloseTo(a.J0, 10);
        expect(b.J45).toBeCloseTo(a.J45, 10);
      }),
      { numRuns: 500 },
    );
  });

  it("gives no -0", () => {
    const pv = toPowerVector(rx(-0, -0, 90));
    expect(Object.is(pv.M, 0) && Object.is(pv.J0, 0) && Object.is(pv.J45, 0)).toBe(true);
  });

  it("throws RxError on NaN", () => {
    expect(() => toPowerVector(rx(Number.NaN))).toThrow(RxError);
  });
});

describe("fromPowerVector", () => {
  it("inverts the worked examples", () => {
    expect(fromPowerVector({ M: -2.5, J0: 0.5, J45: 0 })).toEqual(rx(-2, -1, 180));
    expect(fromPowerVector({ M: 0, J0: 0, J45: 1 })).toEqual(rx(1, -2, 45));
    expect(fromPowerVector({ M: 0, J0: 0, J45: 1 }, "plus")).toEqual(rx(-1, 2, 135));
    expect(fromPowerVector({ M: 1.25, J0: 0, J45: 0 })).toEqual(rx(1.25));
    expect(fromPowerVector({ M: 1.25, J0: 1e-12, J45: -1e-12 })).toEqual(rx(1.25)); // no cross-cylinder → sphere, axis 180
  });

  it("round-trips integer-axis prescriptions (S, C within 5e-9 D, axis exact)", () => {
    fc.assert(
      fc.property(realRx, (input) => {
        const form = input.cylinder > 0 ? "plus" : "minus";
        const back = fromPowerVector(toPowerVector(input), form);
        expect(Math.abs(back.sphere - input.sphere)).toBeLessThan(5e-9);
        expect(Math.abs(back.cylinder - input.cylinder)).toBeLessThan(5e-9);
        expect(back.axis).toBe(input.axis);
      }),
      { numRuns: 1000 },
    );
  });

  it("round-trips the 0.25 D grid exactly", () => {
    fc.assert(
      fc.property(quarterRx, (input) => {
        expect(fromPowerVector(toPowerVector(input))).toEqual(toCylinderForm(input, "minus"));
      }),
      { numRuns: 1000 },
    );
  });

  it("rejects non-finite components", () => {
    expect(() => fromPowerVector({ M: 0, J0: Number.NaN, J45: 0 })).toThrow(/J0 must be a finite number/);
  });
});

describe("blurStrength B = √(M² + J0² + J45²)", () => {
  it("matches hand calculations (Thibos et al. 1997)", () => {
    expect(blurStrength({ M: -2.5, J0: 0.5, J45: 0 })).toBeCloseTo(Math.sqrt(6.5), 9);
    expect(blurStrength({ M: 0, J0: 0.3, J45: 0.4 })).toBe(0.5);
    expect(blurStrength(toPowerVector(rx(0)))).toBe(0);
  });
});

describe("compareRx", () => {
  it("is zero for identical refractions", () => {
    fc.assert(
      fc.property(realRx, (a) => {
        const r = compareRx(a, a);
        expect(r.magnitude).toBe(0);
        expect(r.delta).toEqual({ M: 0, J0: 0, J45: 0 });
      }),
      { numRuns: 500 },
    );
  });

  it("is delta = pv(b) − pv(a) with the vector length as magnitude (hand calculation)", () => {
    // Axis 180 → 90 with −0.50 D cyl: J0 goes +0.25 → −0.25, so |Δ| = 0.50 D.
    const r = compareRx(rx(-2, -0.5, 180), rx(-2, -0.5, 90));
    expect(r.delta).toEqual({ M: 0, J0: -0.5, J45: 0 });
    expect(r.magnitude).toBe(0.5);
    expect(compareRx(rx(-1), rx(-1.25)).magnitude).toBe(0.25);
  });

  it("is antisymmetric and equals the distance measured by the matrix oracle", () => {
    fc.assert(
      fc.property(realRx, realRx, (a, b) => {
        const ab = compareRx(a, b);
        const ba = compareRx(b, a);
        expect(ab.delta.M).toBeCloseTo(-ba.delta.M, 8);
        expect(ab.magnitude).toBeCloseTo(ba.magnitude, 8);
        const ma = powerMatrix(a);
        const mb = powerMatrix(b);
        const dM = (mb.xx + mb.yy - ma.xx - ma.yy) / 2;
        const dJ0 = (mb.xx - mb.yy - (ma.xx - ma.yy)) / 2;
        const dJ45 = mb.xy - ma.xy;
        expect(ab.magnitude).toBeCloseTo(Math.sqrt(dM ** 2 + dJ0 ** 2 + dJ45 ** 2), 7);
      }),
      { numRuns: 500 },
    );
  });
});

describe("isMeaningfulChange (≥ 0.50 D dioptric difference; common practice)", () => {
  it("flags 0.50 D and more, not 0.25 D", () => {
    expect(MEANINGFUL_CHANGE_D).toBe(0.5);
    expect(isMeaningfulChange(compareRx(rx(-2, -0.5, 180), rx(-2, -0.5, 90)))).toBe(true);
    expect(isMeaningfulChange(compareRx(rx(-1), rx(-1.25)))).toBe(false);
    expect(isMeaningfulChange(compareRx(rx(-1), rx(-1.5)))).toBe(true);
  });
});

describe("combine (thin lenses in contact)", () => {
  // Exact facts of optics for crossed cylinders (e.g. Keating MP, Geometric, Physical and Visual
  // Optics, 2nd ed., 2002, chapter on obliquely crossed cylinders — from memory).
  it("crossed equal cylinders at right angles make a sphere", () => {
    expect(combine(rx(0, 1, 90), rx(0, 1, 180))).toEqual(rx(1));
    expect(combine(rx(0, -1, 45), rx(0, -1, 135))).toEqual(rx(-1));
  });

  it("equal and opposite cylinders on one axis cancel to plano", () => {
    expect(combine(rx(0, 1, 180), rx(0, -1, 180))).toEqual(rx(0));
  });

  it("adds spheres and keeps a cylinder", () => {
    expect(combine(rx(-2, -0.75, 30), rx(1.5))).toEqual(rx(-0.5, -0.75, 30));
  });

  it("+1.00 × 30 with +1.00 × 60 gives +0.13 / +1.73 × 45", () => {
    // Classical formulae: C = √(C1² + C2² + 2C1C2 cos 2γ) = √3, S = (C1 + C2 − C)/2, axis midway for equal cylinders.
    const plus = transpose(combine(rx(0, 1, 30), rx(0, 1, 60)));
    expect(plus.sphere).toBeCloseTo(1 - Math.sqrt(3) / 2, 9);
    expect(plus.cylinder).toBeCloseTo(Math.sqrt(3), 9);
    expect(plus.axis).toBe(45);
  });

  it("agrees with the classical obliquely-crossed-cylinder formulae", () => {
    // C = √(C1² + C2² + 2C1C2 cos 2γ), S = (C1 + C2 − C)/2, tan 2θ = C2 sin 2γ / (C1 + C2 cos 2γ),
    // result in plus form with the axis θ from the first cylinder's axis (Keating 2002 — from memory).
    fc.assert(
      fc.property(stepped(-6, 6, 0.25), axis, stepped(-6, 6, 0.25), axis, (c1, a1, c2, a2) => {
        const g = 2 * (a2 - a1) * RAD;
        const C = Math.sqrt(c1 * c1 + c2 * c2 + 2 * c1 * c2 * Math.cos(g));
        const S = (c1 + c2 - C) / 2;
        const result = toCylinderForm(combine(rx(0, c1, a1), rx(0, c2, a2)), "plus");
        expect(result.sphere).toBeCloseTo(S, 8);
        expect(result.cylinder).toBeCloseTo(C, 8);
        if (C > 1e-6) {
          const theta = Math.atan2(c2 * Math.sin(g), c1 + c2 * Math.cos(g)) / 2 / RAD;
          expect(axisGap(result.axis, a1 + theta)).toBeLessThanOrEqual(0.5 + 1e-6);
        }
      }),
      { numRuns: 1000 },
    );
  });

  it("agrees with the sum of dioptric power matrices (eigenvalues and an axis scan)", () => {
    fc.assert(
      fc.property(realRx, realRx, (a, b) => {
        const ma = powerMatrix(a);
        const mb = powerMatrix(b);
        const sum = { xx: ma.xx + mb.xx, xy: ma.xy + mb.xy, yy: ma.yy + mb.yy };
        const expected = eigenSphCyl(sum);
        const result = combine(a, b);
        expect(result.sphere).toBeCloseTo(expected.sphere, 7);
        expect(result.cylinder).toBeCloseTo(expected.cylinder, 7);
        if (expected.cylinder < -0.05) {
          expect(axisGap(result.axis, axisByScan(sum))).toBeLessThanOrEqual(0.51);
        }
      }),
      { numRuns: 200 },
    );
  });

  it("a lens combined with its negative is plano", () => {
    fc.assert(
      fc.property(realRx, (a) => {
        expect(combine(a, { sphere: -a.sphere, cylinder: -a.cylinder, axis: a.axis })).toEqual(rx(0));
      }),
      { numRuns: 1000 },
    );
  });

  it("is commutative and has plano as identity on integer axes", () => {
    fc.assert(
      fc.property(quarterRx, quarterRx, (a, b) => {
        expect(combine(a, b)).toEqual(combine(b, a));
        expect(combine(a, rx(0))).toEqual(toCylinderForm(a, "minus"));
      }),
      { numRuns: 500 },
    );
  });
});
