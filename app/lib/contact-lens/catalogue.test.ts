import { describe, expect, it } from "vitest";
import {
  checkBaseCurve,
  checkDiameter,
  checkLensPower,
  neighbours,
  onStep,
  parseCatalogueLens,
  vertexGuide,
  type CatalogueLens,
} from "./catalogue";

const toric: CatalogueLens = {
  id: "t",
  manufacturer: "Testmere",
  name: "Toric",
  material: "Silicone hydrogel",
  replacement: "monthly",
  baseCurvesMm: [8.6],
  diametersMm: [14.5],
  sphereMin: -8,
  sphereMax: 4,
  sphereStep: 0.25,
  cylinders: [-0.75, -1.25, -1.75],
  axisStep: 10,
};
const sphere: CatalogueLens = { ...toric, id: "s", name: "Sphere", cylinders: [], axisStep: null, sphereStep: 0.5 };

describe("steps a lens is made in", () => {
  it("accepts a power on every step and refuses none of it", () => {
    expect(checkLensPower(toric, { sphere: -2, cylinder: -1.25, axis: 180 }, "Right power")).toEqual([]);
    expect(checkLensPower(toric, { sphere: -8, cylinder: -0.75, axis: 10 }, "Right power")).toEqual([]);
    expect(checkLensPower(sphere, { sphere: -3.5, cylinder: 0, axis: 180 }, "Left power")).toEqual([]);
  });

  it("refuses an axis off the lens's axis step and names the nearest axes", () => {
    // Toric soft lenses are commonly made in 10° axis steps (common practice).
    expect(checkLensPower(toric, { sphere: -2, cylinder: -1.25, axis: 175 }, "Right power")).toEqual([
      "Right power: axis 175 is not made; Testmere Toric comes in 10° steps (nearest 170 or 180).",
    ]);
    expect(checkLensPower(toric, { sphere: -2, cylinder: -1.25, axis: 5 }, "R")[0]).toMatch(/nearest 180 or 10/);
  });

  it("refuses a cylinder the lens is not made in, a sphere off step and one out of range", () => {
    expect(checkLensPower(toric, { sphere: -2, cylinder: -1, axis: 180 }, "R")).toEqual([
      "R: cylinder -1.00 is not made; Testmere Toric comes in cylinders -0.75, -1.25, -1.75.",
    ]);
    expect(checkLensPower(toric, { sphere: -2.12, cylinder: -0.75, axis: 90 }, "R")[0]).toBe(
      "R: sphere -2.12 is not made; Testmere Toric comes in 0.25 D steps (nearest -2.25 or -2.00).",
    );
    expect(checkLensPower(toric, { sphere: -9, cylinder: -0.75, axis: 90 }, "R")[0]).toBe(
      "R: sphere -9.00 is outside the range Testmere Toric is made in (-8.00 to +4.00).",
    );
    expect(checkLensPower(sphere, { sphere: -3.25, cylinder: 0, axis: 180 }, "L")[0]).toMatch(/0\.50 D steps/);
  });

  it("reads a plus-cylinder power in minus-cylinder form before checking (transposition)", () => {
    // Transposition: -3.25 +1.25 x 90 is -2.00 -1.25 x 180 (common practice).
    expect(checkLensPower(toric, { sphere: -3.25, cylinder: 1.25, axis: 90 }, "R")).toEqual([]);
  });

  it("refuses a cylinder on a spherical lens and a toric lens without one", () => {
    expect(checkLensPower(sphere, { sphere: -2, cylinder: -0.75, axis: 90 }, "R")[0]).toMatch(/spherical lens/);
    expect(checkLensPower(toric, { sphere: -2, cylinder: 0, axis: 180 }, "R")[0]).toMatch(/give its cylinder and axis/);
  });

  it("checks base curve and diameter against the lists", () => {
    expect(checkBaseCurve(toric, 8.6, "R BC")).toBeUndefined();
    expect(checkBaseCurve(toric, 8.4, "R BC")).toBe(
      "R BC: base curve 8.40 mm is not made; Testmere Toric comes in 8.60 mm.",
    );
    expect(checkDiameter(toric, 14.0, "R dia")).toMatch(/comes in 14\.5 mm/);
  });

  it("finds steps from the lens's lowest power", () => {
    expect(onStep(-2.25, 0.25, -8)).toBe(true);
    expect(onStep(-2.3, 0.25, -8)).toBe(false);
    expect(neighbours(-2.3, 0.25, -8, 4)).toEqual([-2.5, -2.25]);
    expect(neighbours(-8.1, 0.25, -8, 4)).toEqual([-8]);
  });
});

describe("vertex guide F_c = F_s / (1 − d·F_s)", () => {
  // Effective-power formula for the contact-lens power from a spectacle refraction: required power
  // = measured power / (1 − BVD·measured power), BVD in metres (medicalalgorithms.com, "Calculation
  // of the required power for a contact lens using the back vertex distance").
  it("carries −10.00 D at 12 mm to −8.93 D and +10.00 D to +11.36 D at the cornea", () => {
    expect(vertexGuide({ sphere: -10, cylinder: 0, axis: 180 }, 12).exact.sphere).toBeCloseTo(-10 / 1.12, 6);
    expect(vertexGuide({ sphere: 10, cylinder: 0, axis: 180 }, 12).exact.sphere).toBeCloseTo(10 / 0.88, 6);
    expect(vertexGuide({ sphere: -10, cylinder: 0, axis: 180 }, 12).text).toMatch(/^-8\.93 DS at the cornea/);
  });

  it("converts each principal meridian of a toric refraction", () => {
    // −4.00 −2.00 × 180: meridians −4.00 and −6.00 D, each by the same formula (medicalalgorithms.com, as above).
    const g = vertexGuide({ sphere: -4, cylinder: -2, axis: 180 }, 12).exact;
    expect(g.sphere).toBeCloseTo(-4 / 1.048, 6);
    expect(g.sphere + g.cylinder).toBeCloseTo(-6 / 1.072, 6);
    expect(g.axis).toBe(180);
  });
});

describe("the owner's lens form", () => {
  const form = {
    manufacturer: "Testmere",
    name: "Toric",
    material: "Hydrogel",
    replacement: "monthly",
    baseCurves: "8.6, 8.4",
    diameters: "14.5",
    sphereMin: "-8",
    sphereMax: "+4",
    sphereStep: "0.25",
    cylinders: "-0.75, -1.25",
    axisStep: "10",
  };
  it("reads lists sorted, and a toric lens with its axis step", () => {
    const r = parseCatalogueLens(form);
    expect(r.ok && r.value.baseCurvesMm).toEqual([8.4, 8.6]);
    expect(r.ok && r.value.axisStep).toBe(10);
  });
  it("names each field at fault", () => {
    const r = parseCatalogueLens({ ...form, sphereMax: "-9", axisStep: "7", baseCurves: "8,6" });
    expect(r.ok).toBe(false);
    if (r.ok) return;
    expect(r.errors.sphereMax).toEqual(["The highest sphere must be above the lowest."]);
    expect(r.errors.axisStep?.[0]).toMatch(/divides 180/);
    expect(r.errors.baseCurves?.[0]).toMatch(/use a decimal point, not a comma/);
  });
});
