import { describe, expect, it } from "vitest";
import { checkDispensing, checkDispensingReport, RxError, type LensRx } from "./index";

// Tolerances of ANSI Z80.1-2015 for single-vision and multifocal lenses, as given in published
// quick-reference summaries of the standard: sphere meridian ±0.13 D to ±6.50 D, ±2% beyond;
// cylinder ±0.13 D to 2.00 D, ±0.15 D to 4.50 D, ±4% beyond; axis ±14°/7°/5°/3°/2° for cylinders
// ≤0.25/≤0.50/≤0.75/≤1.50/>1.50 D (none under 0.12 D); add ±0.12 D to 4.00 D, ±0.18 D beyond.
const lens = (sphere: number, cylinder = 0, axis = 180, add?: number): LensRx =>
  add === undefined ? { sphere, cylinder, axis } : { sphere, cylinder, axis, add };

describe("checkDispensing — sphere meridian", () => {
  // Worked explanation of Z80.1-2015 (a published optician-training summary): an ordered −3.00 D
  // lens is acceptable from −2.87 D to −3.13 D.
  it.each([
    [-3.13, true],
    [-2.87, true],
    [-3.14, false],
    [-2.86, false],
  ])("ordered -3.00, measured %s → pass %s", (measured, pass) => {
    expect(checkDispensing(lens(-3), lens(measured)).pass).toBe(pass);
  });

  it("uses ±2% above 6.50 D", () => {
    expect(checkDispensing(lens(-8), lens(-8.16)).pass).toBe(true);
    const r = checkDispensing(lens(-8), lens(-8.17));
    expect(r.failures).toEqual([{ element: "sphere", ordered: -8, measured: -8.17, tolerance: 0.16 }]);
    expect(checkDispensing(lens(6.5), lens(6.63)).pass).toBe(true); // 6.50 D itself is in the ±0.13 D band
  });
});

describe("checkDispensing — cylinder", () => {
  it.each([
    [-1, -1.13, true, 0.13],
    [-1, -1.14, false, 0.13],
    [-3, -3.15, true, 0.15],
    [-3, -3.16, false, 0.15],
    [-5, -5.2, true, 0.2], // 4% of 5.00 D
    [-5, -5.21, false, 0.2],
  ])("ordered %s, measured %s → pass %s (±%s D)", (ordered, measured, pass, tolerance) => {
    const report = checkDispensingReport(lens(-1, ordered, 90), lens(-1, measured, 90));
    const cyl = report.checks.find((c) => c.element === "cylinder");
    expect(cyl?.tolerance).toBeCloseTo(tolerance, 9);
    expect(cyl?.pass).toBe(pass);
  });
});

describe("checkDispensing — axis", () => {
  it.each([
    [-0.25, 14],
    [-0.5, 7],
    [-0.75, 5],
    [-1, 3],
    [-1.5, 3],
    [-2, 2],
  ])("cylinder %s D → ±%s°", (cyl, degrees) => {
    expect(checkDispensing(lens(-1, cyl, 90), lens(-1, cyl, 90 + degrees)).pass).toBe(true);
    const off = checkDispensing(lens(-1, cyl, 90), lens(-1, cyl, 90 + degrees + 1));
    expect(off.failures).toEqual([{ element: "axis", ordered: 90, measured: 91 + degrees, tolerance: degrees }]);
  });

  it("sets no axis tolerance under 0.12 D", () => {
    const report = checkDispensingReport(lens(-1, -0.1, 90), lens(-1, -0.1, 10));
    const axis = report.checks.find((c) => c.element === "axis");
    expect(axis).toMatchObject({ applicable: false, pass: true, tolerance: null });
    expect(report.pass).toBe(true);
  });

  it("measures the axis difference across 180", () => {
    const report = checkDispensingReport(lens(-1, -1, 178), lens(-1, -1, 2));
    expect(report.checks.find((c) => c.element === "axis")).toMatchObject({ difference: 4, pass: false, tolerance: 3 });
  });

  it("compares lenses in minus-cylinder form whatever form they are written in", () => {
    // −1.00 −1.00 × 90 is the same lens as −2.00 +1.00 × 180.
    expect(checkDispensing(lens(-1, -1, 90), lens(-2, 1, 180)).pass).toBe(true);
    const r = checkDispensing(lens(-2, 1, 180), lens(-1.75, -1, 90));
    expect(r.failures).toEqual([{ element: "sphere", ordered: -1, measured: -1.75, tolerance: 0.13 }]);
  });
});

describe("checkDispensing — add", () => {
  it("±0.12 D up to 4.00 D, ±0.18 D above", () => {
    expect(checkDispensing(lens(1, 0, 180, 2), lens(1, 0, 180, 2.12)).pass).toBe(true);
    expect(checkDispensing(lens(1, 0, 180, 2), lens(1, 0, 180, 2.13)).failures).toEqual([
      { element: "add", ordered: 2, measured: 2.13, tolerance: 0.12 },
    ]);
    expect(checkDispensing(lens(1, 0, 180, 4.5), lens(1, 0, 180, 4.68)).pass).toBe(true);
    expect(checkDispensing(lens(1, 0, 180, 4.5), lens(1, 0, 180, 4.69)).pass).toBe(false);
  });

  it("throws when an ordered add was not measured", () => {
    expect(() => checkDispensing(lens(1, 0, 180, 2), lens(1))).toThrow(RxError);
    expect(() => checkDispensing(lens(1, 0, 180, 2), lens(1))).toThrow(/no measured add/);
  });
});

describe("checkDispensingReport", () => {
  it("lists every element with ordered, measured, tolerance and result", () => {
    const report = checkDispensingReport(lens(-3, -1, 90, 2), lens(-3.25, -1, 94, 2.1));
    expect(report.standard).toBe("ANSI Z80.1-2015");
    expect(report.pass).toBe(false);
    expect(report.checks.map((c) => [c.element, c.pass])).toEqual([
      ["sphere", false],
      ["cylinder", true],
      ["axis", false],
      ["add", true],
    ]);
    expect(report.checks[0]).toMatchObject({ ordered: -3, measured: -3.25, difference: -0.25, tolerance: 0.13 });
  });

  it("agrees with checkDispensing", () => {
    const r = checkDispensing(lens(-3, -1, 90, 2), lens(-3.25, -1, 94, 2.1));
    expect(r.pass).toBe(false);
    expect(r.failures.map((f) => f.element)).toEqual(["sphere", "axis"]);
  });

  it("uses the progressive-lens table when asked (±0.16 D sphere to ±8.00 D)", () => {
    expect(checkDispensing(lens(7), lens(7.15)).pass).toBe(false); // single vision: 2% of 7.00 = 0.14 D
    expect(checkDispensing(lens(7), lens(7.15), { lensType: "progressive" }).pass).toBe(true);
    const r = checkDispensingReport(lens(-1, -3, 90), lens(-1, -3.18, 90), { lensType: "progressive" });
    expect(r.checks.find((c) => c.element === "cylinder")).toMatchObject({ tolerance: 0.18, pass: true });
  });

  it("passes an exact lens", () => {
    expect(checkDispensing(lens(-4.25, -1.75, 15, 2.5), lens(-4.25, -1.75, 15, 2.5))).toEqual({
      pass: true,
      failures: [],
    });
  });

  it("rejects non-finite values", () => {
    expect(() => checkDispensing(lens(Number.NaN), lens(1))).toThrow(RxError);
  });
});
