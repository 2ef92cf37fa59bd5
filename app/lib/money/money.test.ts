import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { formatMoney } from "~/lib/format";
import { allocate, computeTotals, minorToDecimal, mulDivRound, parseMoney } from "./index";

describe("rounding", () => {
  it("rounds halves away from zero, in integers", () => {
    expect(mulDivRound(5, 1, 2)).toBe(3); // 2.5 → 3
    expect(mulDivRound(15, 1, 10)).toBe(2); // 1.5 → 2
    expect(mulDivRound(14, 1, 10)).toBe(1);
    expect(mulDivRound(-5, 1, 2)).toBe(-3);
    // 20 % of £8.33 = 166.6p → 167p; 20 % of £0.02 = 0.4p → 0p; 20 % of £0.03 = 0.6p → 1p
    // (VAT Notice 700 lets a business round line tax to the nearest penny, halves up — from memory)
    expect(mulDivRound(833, 2000, 10000)).toBe(167);
    expect(mulDivRound(2, 2000, 10000)).toBe(0);
    expect(mulDivRound(3, 2000, 10000)).toBe(1);
    expect(mulDivRound(Number.MAX_SAFE_INTEGER, 10000, 10000)).toBe(Number.MAX_SAFE_INTEGER);
  });

  it("allocates a discount exactly, never losing or inventing a penny", () => {
    expect(allocate(100, [1, 1, 1])).toEqual([34, 33, 33]);
    expect(allocate(0, [5, 5])).toEqual([0, 0]);
    expect(allocate(7, [0, 0])).toEqual([7, 0]);
    fc.assert(
      fc.property(
        fc.integer({ min: 0, max: 1_000_000 }),
        fc.array(fc.integer({ min: 0, max: 500_000 }), { minLength: 1, maxLength: 12 }),
        (total, weights) => {
          const parts = allocate(total, weights);
          expect(parts.reduce((a, b) => a + b, 0)).toBe(total);
          expect(parts.every((p) => Number.isInteger(p) && p >= 0)).toBe(true);
        },
      ),
    );
  });
});

describe("invoice totals", () => {
  it("adds lines, takes off a percentage discount, and taxes only standard-rated lines", () => {
    // An exempt eye exam (£65.00) and a standard-rated frame (£120.00 × 1) and two solutions (£8.33).
    const t = computeTotals(
      [
        { quantity: 1, unitPriceMinor: 6500, taxCategory: "exempt" },
        { quantity: 1, unitPriceMinor: 12000, taxCategory: "standard" },
        { quantity: 2, unitPriceMinor: 833, taxCategory: "standard" },
      ],
      { kind: "percent", basisPoints: 1000 },
      2000,
    );
    expect(t.subtotalMinor).toBe(6500 + 12000 + 1666);
    expect(t.discountMinor).toBe(2017); // 10 % of 20166 = 2016.6 → 2017
    expect(t.lines.map((l) => l.discountMinor).reduce((a, b) => a + b)).toBe(2017);
    // Shares by value: 6500/20166, 12000/20166, 1666/20166 of 2017 → 650.13, 1200.24, 166.63
    expect(t.lines.map((l) => l.discountMinor)).toEqual([650, 1200, 167]);
    expect(t.lines.map((l) => l.taxMinor)).toEqual([
      0,
      mulDivRound(12000 - 1200, 2000, 10000),
      mulDivRound(1666 - 167, 2000, 10000),
    ]);
    expect(t.lines[1]!.taxMinor).toBe(2160);
    expect(t.lines[2]!.taxMinor).toBe(300); // 1499 × 20 % = 299.8 → 300
    expect(t.taxMinor).toBe(2460);
    expect(t.totalMinor).toBe(20166 - 2017 + 2460);
  });

  it("caps a fixed discount at the subtotal and never goes negative", () => {
    const t = computeTotals(
      [{ quantity: 1, unitPriceMinor: 500, taxCategory: "standard" }],
      { kind: "amount", minor: 900 },
      2000,
    );
    expect(t).toMatchObject({ subtotalMinor: 500, discountMinor: 500, taxMinor: 0, totalMinor: 0 });
  });

  it("has no tax when the rate is 0, and an empty invoice totals 0", () => {
    expect(
      computeTotals([{ quantity: 3, unitPriceMinor: 1999, taxCategory: "standard" }], { kind: "none" }, 0).totalMinor,
    ).toBe(5997);
    expect(computeTotals([], { kind: "none" }, 2000).totalMinor).toBe(0);
  });

  it("refuses fractional quantities or prices", () => {
    expect(() =>
      computeTotals([{ quantity: 1.5, unitPriceMinor: 100, taxCategory: "exempt" }], { kind: "none" }, 0),
    ).toThrow(RangeError);
    expect(() =>
      computeTotals([{ quantity: 1, unitPriceMinor: 10.5, taxCategory: "exempt" }], { kind: "none" }, 0),
    ).toThrow(RangeError);
    expect(() => computeTotals([], { kind: "none" }, 12000)).toThrow(RangeError);
  });

  it("always balances: total = subtotal − discount + Σ line tax", () => {
    fc.assert(
      fc.property(
        fc.array(
          fc.record({
            quantity: fc.integer({ min: 1, max: 20 }),
            unitPriceMinor: fc.integer({ min: 0, max: 200_000 }),
            taxCategory: fc.constantFrom("standard" as const, "exempt" as const),
          }),
          { maxLength: 10 },
        ),
        fc.integer({ min: 0, max: 10000 }),
        fc.integer({ min: 0, max: 10000 }),
        (lines, pct, rate) => {
          const t = computeTotals(lines, { kind: "percent", basisPoints: pct }, rate);
          expect(t.totalMinor).toBe(t.subtotalMinor - t.discountMinor + t.lines.reduce((a, l) => a + l.taxMinor, 0));
          expect(t.lines.every((l) => l.netMinor >= 0 && l.taxMinor >= 0)).toBe(true);
        },
      ),
    );
  });
});

describe("formatting and parsing", () => {
  it("formats and parses minor units exactly", () => {
    expect(formatMoney(1250, "GBP")).toBe("£12.50");
    expect(formatMoney(500, "JPY")).toBe("JP¥500"); // JPY has no minor unit (ISO 4217, from memory)
    expect(minorToDecimal(5, "GBP")).toBe("0.05");
    expect(minorToDecimal(-12345, "GBP")).toBe("-123.45");
    expect(parseMoney("12", "GBP")).toBe(1200);
    expect(parseMoney("£1,250.5", "GBP")).toBe(125050);
    expect(parseMoney("0.07", "GBP")).toBe(7);
    expect(parseMoney("19.999", "GBP")).toBeNull();
    expect(parseMoney("-3", "GBP")).toBeNull();
    expect(parseMoney("abc", "GBP")).toBeNull();
    expect(parseMoney("0.1", "GBP")).toBe(10);
  });
});
