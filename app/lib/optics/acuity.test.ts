import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { AcuityError, fromLogMAR, LOW_VISION_LOGMAR, RxError, toLogMAR } from "./index";

describe("toLogMAR", () => {
  // logMAR = log10(D/d) for a Snellen fraction d/D (Bailey & Lovie 1976; ICO Visual Acuity
  // Measurement Standard 1984): 20/40 = 6/12 = decimal 0.5 = 0.30; 20/20 = 0.0; 20/200 = 1.0.
  it.each([
    ["20/40", 0.3],
    ["6/12", 0.3],
    ["20/20", 0],
    ["6/6", 0],
    ["20/200", 1],
    ["6/60", 1],
    ["4/40", 1], // 4 m chart
    ["0.5", 0.3], // a bare number is decimal acuity
    ["1.0", 0],
    ["0.1", 1],
    ["20/10", -0.3],
    ["3/60", 1.3],
  ])("%s ≈ %s", (text, logMAR) => {
    expect(toLogMAR(text)).toBeCloseTo(logMAR, 2);
  });

  it("is exact, not snapped to chart lines", () => {
    expect(toLogMAR("20/40")).toBeCloseTo(Math.log10(2), 9);
    expect(toLogMAR("6/9")).toBeCloseTo(Math.log10(1.5), 9);
    expect(Object.is(toLogMAR("20/20"), 0)).toBe(true);
  });

  it("scores letters at 0.02 logMAR each (Bailey & Lovie 1976)", () => {
    expect(toLogMAR("20/25-2")).toBeCloseTo(Math.log10(1.25) + 0.04, 9);
    expect(toLogMAR("20/25+2")).toBeCloseTo(Math.log10(1.25) - 0.04, 9);
    expect(toLogMAR("6/9 -1")).toBeCloseTo(Math.log10(1.5) + 0.02, 9);
    expect(toLogMAR("6/12 + 3")).toBeCloseTo(Math.log10(2) - 0.06, 9);
  });

  it("reads labelled logMAR", () => {
    expect(toLogMAR("0.30 logMAR")).toBe(0.3);
    expect(toLogMAR("logMAR 0.3")).toBe(0.3);
    expect(toLogMAR("LogMAR: -0.1")).toBe(-0.1);
    expect(toLogMAR("-0.08 logmar")).toBe(-0.08);
  });

  it("gives low-vision categories their cited stand-in values", () => {
    // Schulze-Bonsel et al. 2006 (IOVS 47:1236–1240): CF ≈ decimal 0.014, HM ≈ decimal 0.005.
    expect(toLogMAR("CF")).toBe(1.85);
    expect(-Math.log10(0.014)).toBeCloseTo(LOW_VISION_LOGMAR.CF.logMAR, 2);
    expect(toLogMAR("HM")).toBe(2.3);
    expect(-Math.log10(0.005)).toBeCloseTo(LOW_VISION_LOGMAR.HM.logMAR, 2);
    // Bach M, Visual Acuity "Cheat Sheet": LP 2.7, NLP 3.0 (imputations).
    expect(toLogMAR("LP")).toBe(2.7);
    expect(toLogMAR("NLP")).toBe(3);
  });

  it.each([
    ["counting fingers", "CF"],
    ["C.F.", "CF"],
    ["CF 1m", "CF"],
    ["CF @ 3 ft", "CF"],
    ["FC at 50cm", "CF"],
    ["hand movements", "HM"],
    ["HM 1 m", "HM"],
    ["PL", "LP"],
    ["light perception", "LP"],
    ["LP with projection", "LP"],
    ["NPL", "NLP"],
    ["no light perception", "NLP"],
  ] as const)("%s reads as %s", (text, category) => {
    expect(toLogMAR(text)).toBe(LOW_VISION_LOGMAR[category].logMAR);
  });

  it.each([
    ["", /Empty acuity/],
    ["abc", /Unrecognised acuity "abc"/],
    ["20/0", /has a zero in its fraction/],
    ["0/20", /has a zero in its fraction/],
    ["0", /must be greater than 0/],
    ["-0.5", /Unrecognised acuity/], // a signed bare number is neither decimal nor labelled logMAR
    ["20", /gives logMAR -1\.30, outside -0\.5 to 3/],
    ["logMAR 3.5", /outside -0\.5 to 3/],
    ["20/40-12", /claims 12 letters/],
    ["6/12/3", /Unrecognised acuity/],
    ["20/40 x", /Unrecognised acuity/],
  ])("rejects %j", (text, message) => {
    expect(() => toLogMAR(text)).toThrow(AcuityError);
    expect(() => toLogMAR(text)).toThrow(message);
  });

  it("AcuityError is an RxError", () => {
    expect(() => toLogMAR("nonsense")).toThrow(RxError);
  });

  it("fuzz: a finite logMAR within range or an AcuityError", () => {
    const piece = fc.constantFrom(
      "20",
      "6",
      "/",
      "40",
      "12",
      "-",
      "+",
      "2",
      "0.5",
      ".",
      " ",
      "logMAR",
      "CF",
      "HM",
      "x",
      "0",
    );
    const text = fc.oneof(
      fc.string({ maxLength: 20 }),
      fc.array(piece, { maxLength: 6 }).map((p) => p.join("")),
    );
    fc.assert(
      fc.property(text, (t) => {
        let value: number;
        try {
          value = toLogMAR(t);
        } catch (error) {
          if (error instanceof AcuityError) return;
          throw error;
        }
        expect(Number.isFinite(value) && value >= -0.5 && value <= 3).toBe(true);
      }),
      { numRuns: 1000 },
    );
  });
});

describe("fromLogMAR", () => {
  // Chart lines of the 0.1 log-step series (ICO 1984 / ISO 8596) with their usual labels (common practice).
  it.each([
    [0.3, "20/40", "6/12", "0.50"],
    [0, "20/20", "6/6", "1.00"],
    [0.1, "20/25", "6/7.5", "0.80"],
    [0.2, "20/32", "6/9.5", "0.63"],
    [0.5, "20/63", "6/19", "0.32"],
    [1, "20/200", "6/60", "0.10"],
    [-0.1, "20/16", "6/4.8", "1.25"],
    [-0.2, "20/12.5", "6/3.8", "1.60"],
    [-0.3, "20/10", "6/3", "2.00"],
    [Math.log10(2), "20/40", "6/12", "0.50"], // within 0.01 of a line → the line's label
    [1.3, "20/400", "6/120", "0.050"],
  ])("%s → %s, %s, %s", (logMAR, feet, metres, decimal) => {
    expect(fromLogMAR(logMAR, "feet")).toBe(feet);
    expect(fromLogMAR(logMAR, "metres")).toBe(metres);
    expect(fromLogMAR(logMAR, "decimal")).toBe(decimal);
  });

  it("computes fractions off the chart lines (hand calculation)", () => {
    // 0.25: 20 × 10^0.25 = 35.6 → 20/36; 6 × 10^0.25 = 10.67 → 6/10.7; 10^−0.25 = 0.562.
    expect(fromLogMAR(0.25, "feet")).toBe("20/36");
    expect(fromLogMAR(0.25, "metres")).toBe("6/10.7");
    expect(fromLogMAR(0.25, "decimal")).toBe("0.56");
    expect(fromLogMAR(1.85, "decimal")).toBe("0.014");
  });

  it("round-trips with toLogMAR to within label rounding (0.025 logMAR)", () => {
    fc.assert(
      fc.property(
        fc.integer({ min: -300, max: 1700 }),
        fc.constantFrom("feet", "metres", "decimal" as const),
        (k, notation) => {
          const logMAR = k / 1000;
          expect(Math.abs(toLogMAR(fromLogMAR(logMAR, notation)) - logMAR)).toBeLessThanOrEqual(0.025);
        },
      ),
      { numRuns: 1000 },
    );
  });

  it("rejects out-of-range or non-finite values", () => {
    expect(() => fromLogMAR(Number.NaN, "feet")).toThrow(RxError);
    expect(() => fromLogMAR(3.2, "feet")).toThrow(/outside -0\.5 to 3/);
    // @ts-expect-error checking a runtime value outside the type
    expect(() => fromLogMAR(0.3, "cubits")).toThrow(/Unknown acuity notation/);
  });
});
