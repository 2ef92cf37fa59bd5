import { describe, expect, it } from "vitest";
import { readAcuity, type AcuityNotation, type AcuityRead } from "./index";

const ok = (text: string, notation: AcuityNotation | null = "metric", distance: "distance" | "near" = "distance") => {
  const r = readAcuity(text, { notation, distance });
  if (!r.ok) throw new Error(`expected ${text} to read, got: ${r.error}`);
  return r as AcuityRead;
};
const refused = (
  text: string,
  notation: AcuityNotation | null = "metric",
  distance: "distance" | "near" = "distance",
) => {
  const r = readAcuity(text, { notation, distance });
  if (r.ok) throw new Error(`expected ${text} to be refused, read as ${r.echo}`);
  return r.error;
};

describe("readAcuity: distance chart values against a published conversion table", () => {
  // Holladay JT, visual acuity conversion chart (J Refract Surg), distance columns Snellen feet 20/,
  // metre 6/, decimal, logMAR: 20/20 = 6/6 = 1.00 = 0.00; 20/40 = 6/12 = 0.50 = 0.30;
  // 20/200 = 6/60 = 0.10 = 1.00; 20/63 = 6/19 = 0.32 = 0.50; 20/10 = 6/3 = 2.00 = -0.30.
  it.each([
    ["6/6", "20/20", "1.0", "0.0", 0],
    ["6/12", "20/40", "0.5", "0.3", 0.3],
    ["6/60", "20/200", "0.1", "1.0", 1],
    ["6/19", "20/63", "0.32", "0.5", 0.5],
    ["6/3", "20/10", "2.0", "-0.3", -0.3],
  ])("%s = %s = decimal %s = logMAR %s", (metric, feet, decimal, logmar, expected) => {
    expect(ok(metric, "metric").logMAR).toBeCloseTo(expected, 1);
    expect(ok(feet, "feet").logMAR).toBeCloseTo(expected, 1);
    expect(ok(decimal, "decimal").logMAR).toBeCloseTo(expected, 1);
    expect(ok(logmar, "logmar").logMAR).toBeCloseTo(expected, 2);
  });

  it("echoes what it read before saving", () => {
    expect(ok("6/60").echo).toBe("reads as 6/60, logMAR 1.00");
    expect(ok("1.0", "logmar").echo).toBe("reads as logMAR 1.00 (6/60)");
    expect(ok("1.0", "decimal").echo).toBe("reads as decimal 1.00 (6/6), logMAR 0.00");
    expect(ok("20/40", "feet").echo).toBe("reads as 20/40 (6/12), logMAR 0.30");
  });

  it("refuses a bare number when the notation does not say what it means", () => {
    // A bare "1.0" is 6/6 as decimal but 6/60 as logMAR (Holladay conversion chart rows above).
    const error = refused("1.0", null);
    expect(error).toMatch(/cannot be read unambiguously/);
    expect(error).toMatch(/decimal it would be 6\/6/);
    expect(error).toMatch(/logMAR 6\/60/);
    expect(refused("1.0", "metric")).toMatch(/cannot be read unambiguously/);
    expect(refused("12", "metric")).toMatch(/type the whole fraction \(6\/12\)/);
    expect(refused("40", "feet")).toMatch(/20\/40/);
  });

  it("lets a typed unit override the practice notation", () => {
    expect(ok("1.0 logMAR", "decimal").logMAR).toBe(1);
    expect(ok("logMAR -0.1", "metric").logMAR).toBe(-0.1);
    expect(ok("0.5 decimal", "logmar").logMAR).toBe(0.3);
    expect(ok("dec 1.0", null).display).toBe("decimal 1.00");
  });

  it("scores letters missed or gained at 0.02 logMAR each (Bailey & Lovie 1976)", () => {
    const r = ok("6/9-2");
    expect(r.logMAR).toBe(0.22); // log10(1.5) = 0.176, + 2 × 0.02
    expect(r.lettersMissed).toBe(2);
    expect(r.display).toBe("6/9-2");
    expect(r.echo).toBe("reads as 6/9 −2 letters, logMAR 0.22");
    expect(ok("6/12+1").logMAR).toBe(0.28);
    expect(refused("6/9-5")).toMatch(/1 to 4 letters/);
  });

  it("reads pinhole acuity", () => {
    const r = ok("PH 6/9");
    expect(r.pinhole).toBe(true);
    expect(r.display).toBe("PH 6/9");
    expect(r.echo).toMatch(/^pinhole, reads as 6\/9/);
    expect(ok("6/9 ph").pinhole).toBe(true);
    expect(ok("6/9").pinhole).toBe(false);
  });

  it("reads CF, HM, LP and NLP with their cited stand-in values", () => {
    // Schulze-Bonsel et al. 2006: CF 1.85, HM 2.30; Bach, Visual Acuity "Cheat Sheet": LP 2.7, NLP 3.0.
    expect(ok("CF 1m")).toMatchObject({ logMAR: 1.85, display: "CF 1m", kind: "low_vision" });
    expect(ok("HM").logMAR).toBe(2.3);
    expect(ok("PL").display).toBe("LP");
    expect(ok("NLP").logMAR).toBe(3);
    expect(ok("CF").echo).toMatch(/counting fingers, recorded as logMAR 1.85 \(a stand-in value/);
    expect(refused("CF", "metric", "near")).toMatch(/distance finding/);
  });

  it("refuses values off the chart, hex and exponent notation, and nonsense", () => {
    expect(refused("3.5", "logmar")).toMatch(/worse than 1.80/);
    expect(refused("-0.5", "logmar")).toMatch(/better than -0.30/);
    expect(refused("0", "decimal")).toMatch(/greater than 0/);
    expect(refused("6", "decimal")).toMatch(/not a decimal acuity/);
    expect(refused("0x10", "decimal")).toMatch(/not an acuity/);
    expect(refused("1e0", "decimal")).toMatch(/not an acuity/);
    expect(refused("6/0")).toMatch(/zero/);
    expect(refused("60/6")).toMatch(/not a chart distance/);
    expect(refused("")).toMatch(/Empty/);
    expect(refused("good")).toMatch(/not a recognised acuity/);
  });

  it("reads back what it displays unchanged", () => {
    for (const [text, notation] of [
      ["6/9-2", "metric"],
      ["1.0", "logmar"],
      ["0.8", "decimal"],
      ["PH 20/30", "feet"],
      ["CF 2m", "metric"],
    ] as const) {
      const first = ok(text, notation);
      const again = ok(first.display, null);
      expect(again.logMAR).toBe(first.logMAR);
      expect(again.display).toBe(first.display);
    }
  });
});

describe("readAcuity: near", () => {
  // Near equivalence at 40 cm (common near-acuity conversion tables): 6/15 = 1M = N8; 6/6 = 0.4M = N3.
  // logMAR at a near distance d (m) is log10(M / d): 1M at 0.40 m = log10(2.5) = 0.40 (Sloan's M units).
  it("reads N-point and M units at 40 cm", () => {
    expect(ok("N8", "metric", "near")).toMatchObject({ logMAR: 0.4, display: "N8" });
    expect(ok("1.0M", "metric", "near").logMAR).toBe(0.4);
    expect(ok("0.4 M", "metric", "near").logMAR).toBe(0);
    expect(ok("N 5", "metric", "near").echo).toBe("reads as N5 at 40 cm (0.63M), logMAR 0.19 (6/9.5)");
  });

  it("uses the test distance", () => {
    const r = readAcuity("1.0M", { notation: "metric", distance: "near", nearDistanceCm: 25 });
    expect(r.ok && r.logMAR).toBe(0.6); // log10(1 / 0.25) = 0.60
  });

  it("keeps near and distance values in their own fields", () => {
    expect(refused("N8", "metric", "distance")).toMatch(/near print size/);
    expect(refused("N100", "metric", "near")).toMatch(/N3–N80/);
    expect(refused("1.0", null, "near")).toMatch(/cannot be read unambiguously/);
  });
});
