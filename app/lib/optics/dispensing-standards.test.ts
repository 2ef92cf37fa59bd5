import { describe, expect, it } from "vitest";
import { checkDispensingReport, checkMountedPair, jurisdictionOf, RxError, type LensRx, type PairEye } from "./index";

const lens = (sphere: number, cylinder = 0, axis = 180, add?: number): LensRx =>
  add === undefined ? { sphere, cylinder, axis } : { sphere, cylinder, axis, add };
const ISO = { standard: "BS EN ISO 21987:2017" } as const;
const ANSI = { standard: "ANSI Z80.1-2015" } as const;
const none = { horizontal: 0, horizontalBase: null, vertical: 0, verticalBase: null };

describe("BS EN ISO 21987 powers (published summaries of the ISO 8980-1 / 21987 tables; from memory)", () => {
  it("±0.12 D on each principal meridian up to 9.00 D, ±0.18 D to 12.00 D, ±0.25 D to 20.00 D", () => {
    expect(checkDispensingReport(lens(-3), lens(-3.12), ISO).pass).toBe(true);
    expect(checkDispensingReport(lens(-3), lens(-3.13), ISO).pass).toBe(false); // ANSI would allow ±0.13 D
    expect(checkDispensingReport(lens(-3), lens(-3.13), ANSI).pass).toBe(true);
    expect(checkDispensingReport(lens(-10), lens(-10.18), ISO).pass).toBe(true);
    expect(checkDispensingReport(lens(-10), lens(-10.19), ISO).pass).toBe(false);
    expect(checkDispensingReport(lens(14), lens(14.25), ISO).pass).toBe(true);
  });

  it("chooses the row by the meridian of highest power and checks the second meridian too", () => {
    // -2.00 -1.50: highest meridian 3.50 D → meridians ±0.12 D, cylinder (0.75–4.00 D) ±0.18 D
    const r = checkDispensingReport(lens(-2, -1.5, 90), lens(-2, -1.67, 90), ISO);
    expect(r.checks.find((c) => c.element === "cylinder")).toMatchObject({ tolerance: 0.18, pass: true });
    expect(r.checks.find((c) => c.element === "second meridian")).toMatchObject({
      ordered: -3.5,
      measured: -3.67,
      tolerance: 0.12,
      pass: false,
    });
    expect(r.pass).toBe(false);
  });

  it("uses the ISO axis table: ±16°, ±9°, ±6°, ±4°, ±3°", () => {
    for (const [cyl, deg] of [
      [-0.25, 16],
      [-0.5, 9],
      [-0.75, 6],
      [-1.25, 4],
      [-2, 3],
    ] as const) {
      expect(
        checkDispensingReport(lens(-1, cyl, 90), lens(-1, cyl, 90 + deg), ISO).checks.find((c) => c.element === "axis")
          ?.pass,
      ).toBe(true);
      expect(
        checkDispensingReport(lens(-1, cyl, 90), lens(-1, cyl, 91 + deg), ISO).checks.find((c) => c.element === "axis")
          ?.pass,
      ).toBe(false);
    }
  });

  it("names the standard in the report", () => {
    expect(checkDispensingReport(lens(1), lens(1), ISO).standard).toBe("BS EN ISO 21987:2017");
  });
});

const eye = (o: Partial<PairEye> & { ordered: LensRx }): PairEye => ({
  measured: o.ordered,
  orderedPrism: none,
  measuredPrism: none,
  ...o,
});

describe("mounted pair: prismatic imbalance and optical centres", () => {
  it("ANSI Z80.1-2015 quick reference: vertical imbalance 0.33 Δ, horizontal 0.67 Δ for weak lenses", () => {
    const r = eye({
      ordered: lens(-2),
      measuredPrism: { horizontal: 0.3, horizontalBase: "out", vertical: 0.2, verticalBase: "up" },
    });
    const l = eye({
      ordered: lens(-2),
      measuredPrism: { horizontal: 0.3, horizontalBase: "out", vertical: 0.1, verticalBase: "down" },
    });
    const rep = checkMountedPair(r, l, ANSI);
    expect(rep.pair.find((c) => c.element === "horizontal prism")).toMatchObject({
      difference: 0.6,
      tolerance: 0.67,
      pass: true,
    });
    expect(rep.pair.find((c) => c.element === "vertical prism")).toMatchObject({
      difference: 0.3,
      tolerance: 0.33,
      pass: true,
    });
    const worse = checkMountedPair(
      r,
      { ...l, measuredPrism: { horizontal: 0.4, horizontalBase: "out", vertical: 0.2, verticalBase: "down" } },
      ANSI,
    );
    expect(worse.pair.map((c) => [c.element, c.pass])).toEqual([
      ["horizontal prism", false],
      ["vertical prism", false],
    ]);
    expect(worse.pass).toBe(false);
  });

  it("base-in on one eye and base-out on the other cancel horizontally; base up on both cancels vertically", () => {
    const r = eye({
      ordered: lens(-1),
      measuredPrism: { horizontal: 0.5, horizontalBase: "in", vertical: 0.5, verticalBase: "up" },
    });
    const l = eye({
      ordered: lens(-1),
      measuredPrism: { horizontal: 0.5, horizontalBase: "out", vertical: 0.5, verticalBase: "up" },
    });
    expect(checkMountedPair(r, l, ISO).pass).toBe(true);
  });

  it("subtracts prism that was ordered", () => {
    const ordered = { horizontal: 0, horizontalBase: null, vertical: 1, verticalBase: "up" as const };
    const r = eye({ ordered: lens(-1), orderedPrism: ordered, measuredPrism: ordered });
    const l = eye({ ordered: lens(-1) });
    expect(checkMountedPair(r, l, ANSI).pass).toBe(true);
    expect(
      checkMountedPair({ ...r, measuredPrism: none }, l, ANSI).pair.find((c) => c.element === "vertical prism"),
    ).toMatchObject({ difference: 1, pass: false });
  });

  it("ISO 21987 (from memory, published summaries): vertical 0.50 Δ where ANSI allows 0.33 Δ", () => {
    const r = eye({
      ordered: lens(-2),
      measuredPrism: { horizontal: 0, horizontalBase: null, vertical: 0.45, verticalBase: "up" },
    });
    const l = eye({ ordered: lens(-2) });
    expect(checkMountedPair(r, l, ISO).pass).toBe(true);
    expect(checkMountedPair(r, l, ANSI).pass).toBe(false);
  });

  it("above the changeover power, allows the prism of the standard's displacement by Prentice's rule", () => {
    // ANSI: horizontal over 2.75 D → 2.5 mm; at -6.00 D that is 0.25 cm × 6 = 1.50 Δ (Prentice's rule).
    const r = eye({
      ordered: lens(-6),
      measuredPrism: { horizontal: 0.7, horizontalBase: "in", vertical: 0, verticalBase: null },
    });
    const l = eye({
      ordered: lens(-6),
      measuredPrism: { horizontal: 0.7, horizontalBase: "in", vertical: 0, verticalBase: null },
    });
    expect(checkMountedPair(r, l, ANSI).pair[0]).toMatchObject({
      element: "horizontal prism",
      difference: 1.4,
      tolerance: 1.5,
      pass: true,
    });
  });

  it("checks measured optical centres in mm against the ordered PDs and heights", () => {
    const base = { orderedPdMm: 32, orderedHeightMm: 20 };
    const r = eye({ ordered: lens(-5), ...base, measuredPdMm: 33.5, measuredHeightMm: 20.5 });
    const l = eye({ ordered: lens(-5), ...base, measuredPdMm: 33, measuredHeightMm: 19.5 });
    const ansi = checkMountedPair(r, l, ANSI);
    expect(ansi.pair.find((c) => c.element === "centre distance")).toMatchObject({
      difference: 2.5,
      tolerance: 2.5,
      pass: true,
    });
    expect(ansi.pair.find((c) => c.element === "height difference")).toMatchObject({ difference: 1, pass: true });
    const iso = checkMountedPair(r, l, ISO);
    expect(iso.pair.find((c) => c.element === "centre distance")).toMatchObject({ tolerance: 2, pass: false });
    expect(iso.pass).toBe(false);
  });

  it("refuses prism without a base", () => {
    const r = eye({
      ordered: lens(-1),
      measuredPrism: { horizontal: 1, horizontalBase: null, vertical: 0, verticalBase: null },
    });
    expect(() => checkMountedPair(r, eye({ ordered: lens(-1) }))).toThrow(RxError);
  });
});

describe("jurisdiction", () => {
  it("chooses the standard, the registration wording and the acuity notation", () => {
    // College of Optometrists guidance: "your name and GOC number" on a UK specification.
    expect(jurisdictionOf("uk")).toMatchObject({
      dispensingStandard: "BS EN ISO 21987:2017",
      registrationLabel: "GOC registration no.",
      acuityNotation: "metres",
    });
    expect(jurisdictionOf("us")).toMatchObject({
      dispensingStandard: "ANSI Z80.1-2015",
      registrationLabel: "License no.",
      acuityNotation: "feet",
    });
  });
});
