import { describe, expect, it } from "vitest";
import {
  FAST_MYOPIA_PROGRESSION_D_PER_YEAR,
  NORMAL_BLIND_SPOT,
  RxError,
  checkBlindSpot,
  myopiaProgression,
  myopiaProgressionReport,
  screenColourVision,
  type SphCyl,
} from "./index";

const rx = (sphere: number, cylinder = 0, axis = 180): SphCyl => ({ sphere, cylinder, axis });

describe("checkBlindSpot", () => {
  // Typical blind spot: ~15° temporal, ~1.5° below, ~5.5° × 7.5° (textbook values; from memory / encyclopaedia summary).
  it("a typical blind spot is within normal", () => {
    const r = checkBlindSpot({ ...NORMAL_BLIND_SPOT });
    expect(r.status).toBe("within normal");
    expect(r.rule).toMatch(/Enlarged if wider than 7\.5° or taller than 9\.5°/);
    expect(r.source).toMatch(/15° temporal/);
  });

  it("small variations are within normal", () => {
    expect(checkBlindSpot({ centreXDeg: 13, centreYDeg: -3, widthDeg: 6.5, heightDeg: 8.5 }).status).toBe(
      "within normal",
    );
  });

  it("reports enlargement", () => {
    const r = checkBlindSpot({ centreXDeg: 15, centreYDeg: -1.5, widthDeg: 9, heightDeg: 7.5 });
    expect(r.status).toBe("enlarged");
    expect(r.reasons).toEqual(["width 9° exceeds 7.5°"]);
  });

  it("reports displacement", () => {
    const r = checkBlindSpot({ centreXDeg: 20, centreYDeg: 3, widthDeg: 5.5, heightDeg: 7.5 });
    expect(r.status).toBe("displaced");
    expect(r.reasons).toEqual([
      "centre 5° further temporal than 15° temporal",
      "centre 4.5° higher than 1.5° below the horizontal",
    ]);
  });

  it("enlarged takes precedence but both reasons are listed", () => {
    const r = checkBlindSpot({ centreXDeg: 10, centreYDeg: -1.5, widthDeg: 5.5, heightDeg: 12 });
    expect(r.status).toBe("enlarged");
    expect(r.reasons).toHaveLength(2);
  });

  it("accepts custom margins", () => {
    expect(
      checkBlindSpot({ centreXDeg: 15, centreYDeg: -1.5, widthDeg: 7, heightDeg: 7.5 }, { sizeDeg: 1 }).status,
    ).toBe("enlarged");
  });

  it("rejects impossible measurements", () => {
    expect(() => checkBlindSpot({ centreXDeg: 15, centreYDeg: -1.5, widthDeg: 0, heightDeg: 7 })).toThrow(
      /must be positive/,
    );
    expect(() => checkBlindSpot({ centreXDeg: Number.NaN, centreYDeg: 0, widthDeg: 5, heightDeg: 7 })).toThrow(RxError);
  });
});

describe("screenColourVision — Ishihara 38- and 24-plate editions", () => {
  // Instructions of the 38-plate edition (from memory; not found in the reference search): plates 1–21,
  // 17 or more read normally = normal, 13 or fewer = deficient. Plate 1 (demonstration) is read by everyone,
  // so over the 20 counted plates 2–21 that is 16 or more = normal, 12 or fewer = deficient.
  // That the manufacturer's totals include plate 1 is supported by the Concise edition's instructions as
  // summarised in "Interpretation of Ishihara Color Plates" (oculistmd.wordpress.com): plates 1–11, 10 or 11 = normal.
  it.each([
    [20, 20, "normal"],
    [16, 20, "normal"], // 17 of 1–21 with the demonstration plate
    [15, 20, "inconclusive"],
    [13, 20, "inconclusive"],
    [12, 20, "deficiency suspected"], // 13 of 1–21 with the demonstration plate
    [0, 20, "deficiency suspected"],
    [16, 16, "normal"], // already 16 read normally
    [7, 15, "deficiency suspected"], // even if the 5 unseen were read, at most 12
    [8, 15, "inconclusive"], // the 5 unseen plates could change the result
  ] as const)("38-plate: %s of %s counted plates shown → %s", (platesCorrect, platesShown, result) => {
    const r = screenColourVision({ test: "ishihara-38", platesCorrect, platesShown });
    expect(r.result).toBe(result);
    expect(r.source).toMatch(/Ishihara S\. Tests for Colour-Deficiency, 38 plates edition/);
    expect(r.source).toMatch(/from memory/);
    expect(r.rule).toMatch(/demonstration plate 1 not counted/);
  });

  it("does not count the demonstration plate: a count including it is refused as too many plates", () => {
    expect(() => screenColourVision({ test: "ishihara-38", platesCorrect: 21, platesShown: 21 })).toThrow(
      /counts only 20 plates/,
    );
  });

  it.each([
    [12, 14, "normal"], // 13 of plates 1–15 with the demonstration plate (24-plate instructions, from memory)
    [11, 14, "inconclusive"],
    [8, 14, "deficiency suspected"], // 9 of plates 1–15
  ] as const)("24-plate: %s of %s counted plates → %s", (platesCorrect, platesShown, result) => {
    expect(screenColourVision({ test: "ishihara-24", platesCorrect, platesShown }).result).toBe(result);
  });

  it("needs a criterion for editions without a built-in one", () => {
    const r = screenColourVision({ test: "ishihara-14", platesCorrect: 10, platesShown: 11 });
    expect(r.result).toBe("inconclusive");
    expect(r.reasons[0]).toMatch(/No pass criterion is built in for "ishihara-14"/);
    const withCriterion = screenColourVision({
      test: "ishihara-14",
      platesCorrect: 11,
      platesShown: 11,
      criterion: { platesAssessed: 11, normalMin: 10, deficientMax: 7, source: "edition manual" },
    });
    expect(withCriterion.result).toBe("normal");
    expect(withCriterion.source).toBe("edition manual");
  });

  it("does not mistake object keys for test names", () => {
    expect(screenColourVision({ test: "toString", platesCorrect: 1, platesShown: 1 }).result).toBe("inconclusive");
  });

  it("rejects inconsistent counts", () => {
    expect(() => screenColourVision({ test: "ishihara-38", platesCorrect: 16, platesShown: 15 })).toThrow(
      /More plates read correctly/,
    );
    expect(() => screenColourVision({ test: "ishihara-38", platesCorrect: 10, platesShown: 25 })).toThrow(
      /counts only 20 plates/,
    );
    expect(() => screenColourVision({ test: "ishihara-38", platesCorrect: 1.5, platesShown: 15 })).toThrow(
      /whole number/,
    );
    expect(() =>
      screenColourVision({
        test: "x",
        platesCorrect: 1,
        platesShown: 2,
        criterion: { platesAssessed: 5, normalMin: 3, deficientMax: 4, source: "" },
      }),
    ).toThrow(/deficientMax < normalMin/);
  });
});

describe("myopiaProgression", () => {
  it("annualises the spherical-equivalent change and flags ≥ 0.50 D/year (common practice)", () => {
    const r = myopiaProgression(
      { date: "2023-01-01", rx: rx(-2, -0.5, 180) },
      { date: "2024-01-01", rx: rx(-2.75, -0.5, 180) },
    );
    expect(r.changeD).toBe(-0.75);
    expect(r.years).toBeCloseTo(1, 2);
    expect(r.ratePerYear).toBeCloseTo(-0.75, 2);
    expect(r.fast).toBe(true);
    expect(r.thresholdPerYear).toBe(FAST_MYOPIA_PROGRESSION_D_PER_YEAR);
    expect(r.warnings).toEqual([]);
  });

  it("does not flag slow progression or hyperopic shifts", () => {
    const slow = myopiaProgression({ date: "2022-06-01", rx: rx(-1) }, { date: "2024-06-01", rx: rx(-1.5) });
    expect(slow.ratePerYear).toBeCloseTo(-0.25, 2);
    expect(slow.fast).toBe(false);
    expect(myopiaProgression({ date: "2022-06-01", rx: rx(1) }, { date: "2023-06-01", rx: rx(2) }).fast).toBe(false);
  });

  it("uses the spherical equivalent, so cylinder change counts half", () => {
    const r = myopiaProgression({ date: "2023-01-01", rx: rx(-2) }, { date: "2025-01-01", rx: rx(-2, -1, 90) });
    expect(r.changeD).toBe(-0.5);
  });

  it("warns about short intervals", () => {
    const r = myopiaProgression({ date: "2024-01-01", rx: rx(-2) }, { date: "2024-03-01", rx: rx(-2.25) });
    expect(r.warnings[0]).toMatch(/under six months is unreliable/);
  });

  it("rejects bad dates", () => {
    expect(() => myopiaProgression({ date: "01/02/2024", rx: rx(-1) }, { date: "2024-06-01", rx: rx(-1) })).toThrow(
      /ISO 8601/,
    );
    expect(() => myopiaProgression({ date: "2024-06-01", rx: rx(-1) }, { date: "2024-06-01", rx: rx(-1) })).toThrow(
      /must be after/,
    );
    expect(() => myopiaProgression({ date: "2024-02-30", rx: rx(-1) }, { date: "2024-06-01", rx: rx(-1) })).toThrow(
      /ISO 8601/,
    );
    expect(() =>
      myopiaProgression({ date: "2024-02-29", rx: rx(-1) }, { date: "2024-06-01T09:30:00Z", rx: rx(-1) }),
    ).not.toThrow();
  });
});

describe("myopiaProgressionReport", () => {
  const rx = (sphere: number, cylinder = 0) => ({ sphere, cylinder, axis: 180 });

  it("shows myopic eyes only (IMI: spherical equivalent ≤ −0.50 D, Flitcroft et al. 2019)", () => {
    // −0.25 −0.50 × 180 has SE −0.50: myopic by the IMI threshold.
    expect(
      myopiaProgressionReport([
        { date: "2024-01-10", rx: rx(0) },
        { date: "2025-01-10", rx: rx(-0.25, -0.5) },
      ]),
    ).not.toBeNull();
    // SE −0.375 is above the threshold, and a hyperope is never reported.
    expect(
      myopiaProgressionReport([
        { date: "2024-01-10", rx: rx(0) },
        { date: "2025-01-10", rx: rx(-0.25, -0.25) },
      ]),
    ).toBeNull();
    expect(
      myopiaProgressionReport([
        { date: "2024-01-10", rx: rx(1) },
        { date: "2025-01-10", rx: rx(0.5) },
      ]),
    ).toBeNull();
    expect(myopiaProgressionReport([{ date: "2025-01-10", rx: rx(-2) }])).toBeNull();
  });

  it("gives the most recent interval as well as the average, and does not call an average fast", () => {
    // Fast early, slowed recently: −1.00 D/year for two years, then −0.25 D/year (rates by arithmetic).
    const report = myopiaProgressionReport([
      { date: "2022-03-01", rx: rx(-1) },
      { date: "2023-03-01", rx: rx(-2) },
      { date: "2024-02-29", rx: rx(-3) },
      { date: "2025-03-01", rx: rx(-3.25) },
    ])!;
    expect(report.recent.ratePerYear).toBeCloseTo(-0.25, 2);
    expect(report.recent.atOrBeyondThreshold).toBe(false);
    expect(report.recent.label).toMatch(
      /^Most recent interval \(2024-02-29 to 2025-03-01\): −0\.25 D per year .* below the 0\.50 D per year review threshold$/,
    );
    expect(report.overall!.ratePerYear).toBeCloseTo(-0.75, 2);
    expect(report.overall!.label).toMatch(
      /^Average over all visits .*on average at or beyond the 0\.50 D per year review threshold; see the most recent interval/,
    );
    for (const l of [report.recent.label, report.overall!.label]) expect(l).not.toMatch(/fast/i);
    expect(report.thresholdMeaning).toMatch(/prompt for review, not a diagnosis/);
  });

  it("has no separate average with only two visits, and orders visits by date", () => {
    const report = myopiaProgressionReport([
      { date: "2025-06-01", rx: rx(-2.5) },
      { date: "2024-06-01", rx: rx(-1.75) },
    ])!;
    expect(report.overall).toBeNull();
    expect(report.recent.ratePerYear).toBeCloseTo(-0.75, 2);
    expect(report.recent.atOrBeyondThreshold).toBe(true);
    expect(report.recent.label).toMatch(/at or beyond the 0\.50 D per year review threshold over this interval/);
  });
});
