import fc from "fast-check";
import { describe, expect, it } from "vitest";
import {
  formatRx,
  intermediateRx,
  meridianPower,
  nearRx,
  parseRx,
  roundRx,
  RxError,
  sphericalEquivalent,
  toCylinderForm,
  toPowerVector,
  transpose,
  type SphCyl,
} from "./index";
import { centiRx, quarterRx, realRx } from "./test-arbitraries";

const rx = (sphere: number, cylinder = 0, axis = 180): SphCyl => ({ sphere, cylinder, axis });

describe("parseRx reads the notations clinicians write", () => {
  // Each expected value is what a clinician reads from the written Rx (common practice).
  const cases: [string, SphCyl][] = [
    ["-2.25 -0.75 x 175", rx(-2.25, -0.75, 175)],
    ["+1.00 DS", rx(1)],
    ["+1.00 D.S.", rx(1)],
    ["-3.50 sph", rx(-3.5)],
    ["pl", rx(0)],
    ["plano", rx(0)],
    ["PL", rx(0)],
    ["Plano", rx(0)],
    ["0", rx(0)],
    ["-0.00", rx(0)],
    ["-1.50/-0.50x90", rx(-1.5, -0.5, 90)],
    ["+0.50 -0.25 × 005", rx(0.5, -0.25, 5)],
    ["+0.50 -0.25 X 5", rx(0.5, -0.25, 5)],
    ["-2.00 -1.00 @ 90", rx(-2, -1, 90)],
    ["-2.00 -1.00 axis 90", rx(-2, -1, 90)],
    ["-2.00 -1.00 axis90", rx(-2, -1, 90)],
    ["-2.00 -1.00x090°", rx(-2, -1, 90)],
    ["-2", rx(-2)],
    ["-2.5", rx(-2.5)],
    ["-.75", rx(-0.75)],
    ["+2", rx(2)],
    ["2.00", rx(2)], // an unsigned power is read as plus
    ["-2.12 -0.37 x 12", rx(-2.12, -0.37, 12)], // off-step values are legal input
    ["\u22122.00 \u22120.50 \u00D7 180", rx(-2, -0.5, 180)], // U+2212 minus and U+00D7 multiplication sign
    ["\u20132.00 \u20130.50 x 180", rx(-2, -0.5, 180)], // en dashes typed as minus
    ["-2.00 DS / -0.50 DC x 90", rx(-2, -0.5, 90)], // UK-style labelled components
    ["-2.00D -0.50D x 90", rx(-2, -0.5, 90)],
    ["plano / -0.50 x 90", rx(0, -0.5, 90)],
    ["pl -0.50 x 90", rx(0, -0.5, 90)],
    ["-0.50 DC x 90", rx(0, -0.5, 90)], // a lone cylinder is written on a plano sphere
    ["-0.50DCx90", rx(0, -0.5, 90)],
    ["+1.00 +0.50 x 45", rx(1, 0.5, 45)], // plus-cylinder form is kept as typed
    ["-2.00 -0.50 x 0", rx(-2, -0.5, 180)], // axis 0 is the 180 meridian
    ["-2.00 -0.50 x 000", rx(-2, -0.5, 180)],
    ["-2.00 0.00 x 90", rx(-2)], // a zero cylinder leaves a sphere
    ["-2.00 -0.00", rx(-2)],
    ["  -2.00   -0.50   x   90  ", rx(-2, -0.5, 90)],
    ["- 2.00", rx(-2)],
    ["-30.00", rx(-30)],
    ["+30", rx(30)],
    ["-1.00 -30.00 x 10", rx(-1, -30, 10)],
  ];
  it.each(cases)("%s", (text, expected) => {
    expect(parseRx(text)).toEqual(expected);
  });
});

describe("parseRx rejects malformed input with a message naming the problem", () => {
  const cases: [string, RegExp][] = [
    ["", /^Empty prescription$/],
    ["   ", /^Empty prescription$/],
    ["abc", /Expected a sphere power or "plano" at "abc"/],
    ["x 90", /Expected a sphere power or "plano" at "x"/],
    ["-1.00 -0.50 x 181", /^Axis 181 is out of range 1–180 in "-1\.00 -0\.50 x 181"$/],
    ["-1.00 -0.50 x 360", /Axis 360 is out of range 1–180/],
    ["-1.00 -0.50 x 90.5", /Axis 90\.5 is not a whole number of degrees/],
    ["-1.00 -0.50 x -90", /Axis -90 must be an unsigned whole number/],
    ["-1.00 -0.50", /Cylinder -0\.50 D has no axis/],
    ["-1.00/-0.50", /Cylinder -0\.50 D has no axis/],
    ["-1.00 -0.50 x", /Axis marker "x" is not followed by an axis/],
    ["-1.00 -0.50 x 90 x 180", /Two axes given \("x 90" and "x 180"\)/],
    ["-1.00 -0.50 x 90 @ 180", /Two axes given/],
    ["-1.00 -0.50 x 90 180", /Unexpected "180"/],
    ["-1.00 -0.50 90", /Number 90 needs an axis marker/],
    ["-2.00 x 90", /Axis given without a cylinder/],
    ["-2.00/", /Expected a cylinder after "\/"/],
    ["-31.00", /Sphere -31\.00 D is beyond ±30 D/],
    ["+99", /Sphere \+99 D is beyond ±30 D/],
    ["-1.00 -30.25 x 90", /Cylinder -30\.25 D is beyond ±30 D/],
    ["-", /Sign "-" is not followed by a power/],
    ["+ DS", /Sign "\+" is not followed by a power/],
    ["-2.00 -0.50 x 90 abc", /Unexpected "abc"/],
    ["-2.00 foo", /Unexpected "foo"/],
    ["1e5", /Unexpected "e"/],
    ["NaN", /Expected a sphere power or "plano" at "nan"/],
    ["Infinity", /Expected a sphere power or "plano"/],
    ["-2.00 -0.50 x 90;", /Unexpected ";"/],
    ["20/40", /Cylinder 40 D is beyond ±30 D/],
  ];
  it.each(cases)("%j", (text, message) => {
    expect(() => parseRx(text)).toThrow(RxError);
    expect(() => parseRx(text)).toThrow(message);
  });

  it("quotes long input shortened", () => {
    const long = `-2.00 ${"z".repeat(200)}`;
    expect(() => parseRx(long)).toThrow(/…"$/);
  });
});

describe("parseRx fuzz: a valid SphCyl or an RxError, never NaN or another error", () => {
  function check(text: string): void {
    let parsed: SphCyl;
    try {
      parsed = parseRx(text);
    } catch (error) {
      if (error instanceof RxError && error.message.length > 0) return;
      throw error;
    }
    const { sphere, cylinder, axis } = parsed;
    expect(Number.isFinite(sphere) && Number.isFinite(cylinder)).toBe(true);
    expect(Object.is(sphere, -0) || Object.is(cylinder, -0)).toBe(false);
    expect(Number.isInteger(axis) && axis >= 1 && axis <= 180).toBe(true);
    expect(Math.abs(sphere) <= 30 && Math.abs(cylinder) <= 30).toBe(true);
    if (cylinder === 0) expect(axis).toBe(180);
  }

  it("arbitrary unicode strings", () => {
    fc.assert(fc.property(fc.string({ unit: "grapheme", maxLength: 40 }), check), { numRuns: 1000 });
  });

  it("soups of Rx-like tokens", () => {
    const piece = fc.constantFrom(
      "-",
      "+",
      "\u2212",
      "\u2013",
      "2.25",
      "-0.75",
      ".5",
      "0",
      "005",
      "90",
      "180",
      "181",
      "0",
      "35",
      "x",
      "X",
      "\u00D7",
      "@",
      "axis",
      "/",
      "DS",
      "DC",
      "D.S.",
      "sph",
      "cyl",
      "pl",
      "plano",
      "D",
      "°",
      " ",
      "  ",
      "abc",
      ".",
      ";",
    );
    const soup = fc.array(piece, { maxLength: 9 }).map((parts) => parts.join(""));
    const spaced = fc.array(piece, { maxLength: 9 }).map((parts) => parts.join(" "));
    fc.assert(fc.property(fc.oneof(soup, spaced), check), { numRuns: 1000 });
  });
});

describe("formatRx", () => {
  it.each([
    [rx(-2.25, -0.75, 175), "-2.25 -0.75 x 175"], // contract examples
    [rx(0), "plano"],
    [rx(1), "+1.00 DS"],
    [rx(0, -0.5, 90), "plano -0.50 x 090"],
    [rx(0.5, -0.25, 5), "+0.50 -0.25 x 005"],
    [rx(-2, 0, 45), "-2.00 DS"],
    [rx(-0, -0, 90), "plano"],
  ])("%j → %s", (input, text) => {
    expect(formatRx(input)).toBe(text);
  });

  it("writes minus-cylinder form by default and transposes for plus form", () => {
    // Transposition rule (common practice): S' = S + C, C' = −C, axis ± 90.
    expect(formatRx(rx(-2, 1, 90))).toBe("-1.00 -1.00 x 180");
    expect(formatRx(rx(-2, -0.5, 5), { form: "plus" })).toBe("-2.50 +0.50 x 095");
  });

  it("rounds to the requested step first", () => {
    // −10.00 D at 12 mm is −8.9286 D at the cornea (common practice example), dispensed as −9.00 D.
    expect(formatRx(rx(-10 / 1.12), { step: 0.25 })).toBe("-9.00 DS");
    expect(formatRx(rx(-2.12, -0.37, 90), { step: 0.25 })).toBe("-2.00 -0.50 x 090");
  });

  it("round-trips through parseRx on 0.25 D steps in both forms", () => {
    fc.assert(
      fc.property(quarterRx, fc.constantFrom("minus" as const, "plus" as const), (input, form) => {
        expect(parseRx(formatRx(input, { form }))).toEqual(toCylinderForm(input, form));
      }),
      { numRuns: 1000 },
    );
  });

  it("throws RxError on non-finite input", () => {
    expect(() => formatRx(rx(Number.NaN))).toThrow(RxError);
    expect(() => formatRx(rx(1, Number.POSITIVE_INFINITY, 90))).toThrow(/Cylinder must be a finite number/);
  });
});

describe("transpose", () => {
  it("follows the transposition rule (common practice)", () => {
    expect(transpose(rx(-2, -1, 180))).toEqual(rx(-3, 1, 90));
    expect(transpose(rx(1.5, -0.5, 45))).toEqual(rx(1, 0.5, 135));
    expect(transpose(rx(0.5, 0.75, 170))).toEqual(rx(1.25, -0.75, 80));
    expect(transpose(rx(-2))).toEqual(rx(-2));
  });

  it("applied twice is the identity (0.25 D grid, exact)", () => {
    fc.assert(
      fc.property(quarterRx, (input) => {
        expect(transpose(transpose(input))).toEqual(input);
      }),
      { numRuns: 1000 },
    );
  });

  it("applied twice is the identity on real-valued powers (within 1e-9 D)", () => {
    fc.assert(
      fc.property(realRx, (input) => {
        const back = transpose(transpose(input));
        expect(back.sphere).toBeCloseTo(input.sphere, 8);
        expect(back.cylinder).toBeCloseTo(input.cylinder, 8);
        expect(back.axis).toBe(input.axis);
      }),
      { numRuns: 1000 },
    );
  });

  it("does not change the lens (same power vector)", () => {
    fc.assert(
      fc.property(realRx, (input) => {
        const a = toPowerVector(input);
        const b = toPowerVector(transpose(input));
        expect(b.M).toBeCloseTo(a.M, 8);
        expect(b.J0).toBeCloseTo(a.J0, 8);
        expect(b.J45).toBeCloseTo(a.J45, 8);
      }),
      { numRuns: 500 },
    );
  });
});

describe("sphericalEquivalent", () => {
  it("is S + C/2 (hand calculation)", () => {
    expect(sphericalEquivalent(rx(-2, -1, 180))).toBe(-2.5);
    expect(sphericalEquivalent(rx(1.25, -0.5, 90))).toBe(1);
    expect(sphericalEquivalent(rx(-1, 2, 10))).toBe(0);
  });
});

describe("roundRx (meridian by meridian, halves away from zero)", () => {
  it("rounds each principal meridian and rebuilds the lens", () => {
    // Hand calculation: meridians −2.12 → −2.00 and −2.49 → −2.50, so −2.00 −0.50 × 90.
    expect(roundRx(rx(-2.12, -0.37, 90))).toEqual(rx(-2, -0.5, 90));
    // Same lens in plus form: meridians −2.49 and −2.12 round alike → −2.50 +0.50 × 180.
    expect(roundRx(rx(-2.49, 0.37, 180))).toEqual(rx(-2.5, 0.5, 180));
    expect(roundRx(rx(-10 / 1.12))).toEqual(rx(-9));
    expect(roundRx(rx(-2.125))).toEqual(rx(-2.25));
    expect(roundRx(rx(2.125))).toEqual(rx(2.25));
    expect(roundRx(rx(1.1, -0.1, 30))).toEqual(rx(1)); // cylinder that rounds away leaves a sphere
    // 0.125 D step: meridians −1.06 → −1.000 and −1.55 → −1.500.
    expect(roundRx(rx(-1.06, -0.49, 60), 0.125)).toEqual(rx(-1, -0.5, 60));
  });

  it("gives the same lens whichever cylinder form is supplied", () => {
    fc.assert(
      fc.property(centiRx, (input) => {
        const viaMinus = toCylinderForm(roundRx(toCylinderForm(input, "minus")), "minus");
        const viaPlus = toCylinderForm(roundRx(toCylinderForm(input, "plus")), "minus");
        expect(viaPlus).toEqual(viaMinus);
      }),
      { numRuns: 1000 },
    );
  });

  it("lands on the step and within half a step of each meridian", () => {
    fc.assert(
      fc.property(realRx, (input) => {
        const r = roundRx(input);
        expect(Number.isInteger(r.sphere * 4) && Number.isInteger(r.cylinder * 4)).toBe(true);
        expect(Math.abs(r.sphere - input.sphere)).toBeLessThanOrEqual(0.125 + 1e-9);
        expect(Math.abs(r.sphere + r.cylinder - (input.sphere + input.cylinder))).toBeLessThanOrEqual(0.125 + 1e-9);
      }),
      { numRuns: 500 },
    );
  });

  it("rejects a bad step", () => {
    expect(() => roundRx(rx(1), 0)).toThrow(/Rounding step must be positive/);
    expect(() => roundRx(rx(1), Number.NaN)).toThrow(RxError);
  });
});

describe("meridianPower F(θ) = S + C·sin²(θ − axis)", () => {
  it("matches hand calculations", () => {
    const lens = rx(-2, -1, 180);
    expect(meridianPower(lens, 180)).toBe(-2);
    expect(meridianPower(lens, 90)).toBe(-3);
    expect(meridianPower(lens, 45)).toBe(-2.5);
    expect(meridianPower(rx(1, 2, 30), 120)).toBe(3);
  });
});

describe("nearRx and intermediateRx", () => {
  it("add the reading addition (or a fraction of it) to the sphere", () => {
    expect(nearRx(rx(-1, -0.5, 90), 2)).toEqual(rx(1, -0.5, 90));
    expect(intermediateRx(rx(-1, -0.5, 90), 2)).toEqual(rx(0, -0.5, 90)); // half the add (common practice)
    expect(intermediateRx(rx(0.5), 2.5, 0.6)).toEqual(rx(2));
  });

  it("reject a negative add or a fraction outside 0..1", () => {
    expect(() => nearRx(rx(0), -1)).toThrow(/Add -1\.00 must not be negative/);
    expect(() => intermediateRx(rx(0), 2, 1.5)).toThrow(/between 0 and 1/);
  });
});
