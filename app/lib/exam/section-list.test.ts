import { describe, expect, it } from "vitest";
import { EXAM_SECTIONS, EXAM_SECTION_IDS, isExamSectionId, sectionTitle } from "./section-list";
import { REFRACTION_KINDS } from "./sections";

describe("the exam's section list", () => {
  it("names every section once, refractions in the order of REFRACTION_KINDS after acuity", () => {
    expect(new Set(EXAM_SECTION_IDS).size).toBe(EXAM_SECTION_IDS.length);
    const acuity = EXAM_SECTION_IDS.indexOf("acuity");
    expect(EXAM_SECTION_IDS.slice(acuity + 1, acuity + 1 + REFRACTION_KINDS.length)).toEqual(
      REFRACTION_KINDS.map((k) => `refraction:${k}`),
    );
    expect(EXAM_SECTION_IDS[0]).toBe("redflags");
    expect(EXAM_SECTION_IDS.at(-1)).toBe("assessment");
  });

  it("gives each section a title and a short label", () => {
    for (const s of EXAM_SECTIONS) {
      expect(s.title.length).toBeGreaterThan(0);
      expect(s.nav.length).toBeGreaterThan(0);
    }
    expect(sectionTitle("iop")).toBe("Intraocular pressure");
    expect(sectionTitle("refraction:habitual")).toBe("Habitual spectacles (lensometry)");
  });

  it("refuses an id that is not a section", () => {
    expect(isExamSectionId("fields")).toBe(true);
    expect(isExamSectionId("refraction:final")).toBe(true);
    expect(isExamSectionId("refraction:guess")).toBe(false);
    expect(isExamSectionId("")).toBe(false);
  });
});
