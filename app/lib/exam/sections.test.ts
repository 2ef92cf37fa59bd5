import { describe, expect, it } from "vitest";
import {
  DIAGNOSES,
  meanIop,
  parseAcuity,
  parseAnteriorChamber,
  parseDiagnoses,
  parseDilations,
  parseDiscs,
  parseFundus,
  parseIop,
  parseNumber,
  parsePupils,
  parseRedFlags,
  parseRefractionEye,
  parseRxText,
} from "./sections";

describe("parseNumber", () => {
  it("reads plain decimals and refuses hex, exponent, Infinity and commas", () => {
    expect(parseNumber("21", "IOP", 1, 80).value).toBe(21);
    expect(parseNumber(" -1.5 ", "x", -5, 5).value).toBe(-1.5);
    expect(parseNumber("\u22121.5", "x", -5, 5).value).toBe(-1.5);
    expect(parseNumber(".5", "x", 0, 1).value).toBe(0.5);
    expect(parseNumber("", "x", 0, 1)).toEqual({ value: null });
    for (const t of ["0x10", "1e1", "1E1", "Infinity", "NaN", "0b11", "1 2", "12abc", "+"]) {
      const r = parseNumber(t, "IOP", 1, 80);
      expect(r.value, t).toBeNull();
      expect(r.error, t).toMatch(/is not a number/);
    }
    expect(parseNumber("1,5", "x", 0, 5).error).toMatch(/decimal point/);
  });

  it("refuses out-of-range, fractional and off-step values with the reason", () => {
    expect(parseNumber("0", "Right IOP (mmHg)", 1, 80).error).toBe("Right IOP (mmHg): 0 is outside 1 to 80.");
    expect(parseNumber("2.5", "Grade", 0, 4, { integer: true }).error).toMatch(/whole number/);
    expect(parseNumber("1.1", "Add", 0.25, 4, { step: 0.25 }).error).toMatch(/steps of 0.25/);
  });
});

describe("parseAcuity", () => {
  it("reads a bare number only in a notation that defines it, and refuses it otherwise", () => {
    // logMAR 1.0 = 6/60 and decimal 1.0 = 6/6 (definitions of the scales, common practice)
    expect(parseAcuity("1.0", "R VA", { notation: "logmar" }).value).toMatchObject({ logMar: 1, scale: "logmar" });
    expect(parseAcuity("1.0", "R VA", { notation: "decimal" }).value).toMatchObject({ logMar: 0, scale: "decimal" });
    expect(parseAcuity("1.0", "R VA", { notation: "metric" }).error).toMatch(/^R VA: .*cannot be read unambiguously/);
    expect(parseAcuity("1.0", "R VA").error).toMatch(/unambiguously/);
  });

  it("echoes what it read, and records the scale", () => {
    const r = parseAcuity("6/60", "R VA", { notation: "metric" }).value!;
    expect(r.echo).toBe("reads as 6/60, logMAR 1.00");
    expect(r.scale).toBe("metric");
    expect(parseAcuity("20/40", "R VA").value!.scale).toBe("feet");
    expect(parseAcuity("N8", "R near", { distance: "near" }).value).toMatchObject({ scale: "n_point", logMar: 0.4 }); // N8 at 40 cm = 1.0M = logMAR 0.40 (Law's N-scale, from memory)
    expect(parseAcuity("1.0M", "R near", { distance: "near" }).value!.scale).toBe("m_units");
    expect(parseAcuity("CF 1m", "R VA").value!.scale).toBe("low_vision");
    expect(parseAcuity("PH 6/9", "R VA").value).toMatchObject({ pinhole: true, scale: "metric" });
  });

  it("refuses logMAR 3.5 and numbers in hex or exponent form", () => {
    expect(parseAcuity("3.5", "R VA", { notation: "logmar" }).error).toMatch(/^R VA: /);
    expect(parseAcuity("0x10", "R VA", { notation: "logmar" }).error).toMatch(/not an acuity/);
    expect(parseAcuity("1e1", "R VA", { notation: "decimal" }).error).toMatch(/not an acuity/);
  });
});

describe("parseRefractionEye", () => {
  it("refuses axis 0 and 181 (axes run 1 to 180, common practice)", () => {
    for (const axis of ["0", "181"]) {
      const r = parseRefractionEye({ right_rx: `-1.00 -0.50 x ${axis}` }, "right", "Final");
      expect(r.ok, axis).toBe(false);
      if (!r.ok) expect(r.errors.right_rx![0]).toMatch(new RegExp(axis));
    }
    expect(parseRefractionEye({ right_rx: "-1.00 -0.50 x 180" }, "right", "Final").ok).toBe(true);
  });
});

describe("parseRedFlags", () => {
  it("keeps the eye of each symptom and the general ones", () => {
    const r = parseRedFlags({
      rf_flashes: "right",
      rf_newFloaters: "both",
      rf_newDiplopia: "on",
      rf_notes: " since Tuesday ",
    });
    expect(r).toEqual({
      ok: true,
      value: expect.objectContaining({
        flashes: "right",
        newFloaters: "both",
        curtain: null,
        newDiplopia: true,
        gcaSymptoms: false,
        notes: "since Tuesday",
      }),
    });
  });
  it("refuses an eye that is not on the list", () => {
    const r = parseRedFlags({ rf_flashes: "middle" });
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.errors.rf_flashes![0]).toMatch(/Flashes of light: choose one/);
  });
});

describe("parsePupils", () => {
  it("records per eye and refuses a defect in both eyes or contradictions", () => {
    expect(parsePupils({ right_pup_equal: "on", left_pup_rapd: "on", left_pup_size: "4.5" })).toEqual({
      ok: true,
      value: {
        right: { equalReactive: true, rapd: false, larger: false, sizeMm: null, notes: "" },
        left: { equalReactive: false, rapd: true, larger: false, sizeMm: 4.5, notes: "" },
      },
    });
    const both = parsePupils({ right_pup_rapd: "on", left_pup_rapd: "on" });
    expect(both.ok).toBe(false);
    if (!both.ok) expect(both.errors.left_pup_rapd![0]).toMatch(/one eye only/);
    const contra = parsePupils({ right_pup_equal: "on", right_pup_larger: "on" });
    expect(contra.ok).toBe(false);
    const size = parsePupils({ right_pup_size: "12" });
    expect(size.ok).toBe(false);
  });
});

describe("parseAnteriorChamber", () => {
  it("takes van Herick 0–4 as a whole number and cells from the list", () => {
    expect(parseAnteriorChamber({ right_ac_vh: "2", right_ac_cells: "1+", left_ac_hypopyon: "on" })).toEqual({
      ok: true,
      value: {
        right: { vanHerick: 2, cells: "1+", hyphaema: false, hypopyon: false, notes: "" },
        left: { vanHerick: null, cells: null, hyphaema: false, hypopyon: true, notes: "" },
      },
    });
    for (const vh of ["5", "2.5", "0x2"]) expect(parseAnteriorChamber({ right_ac_vh: vh }).ok, vh).toBe(false);
    expect(parseAnteriorChamber({ right_ac_cells: "lots" }).ok).toBe(false);
  });
});

describe("parseIop", () => {
  it("takes several readings per eye, later ones inheriting method and time", () => {
    const r = parseIop({
      right_mmHg: "25",
      right_method: "goldmann",
      right_time: "10:05",
      right_mmHg_2: "26",
      left_mmHg: "17",
      left_method: "non_contact",
      left_time: "10:00",
      left_mmHg_2: "18",
      left_method_2: "goldmann",
      left_time_2: "10:10",
      right_cct: "540",
    });
    expect(r).toEqual({
      ok: true,
      value: {
        readings: {
          right: [
            { mmHg: 25, method: "goldmann", time: "10:05" },
            { mmHg: 26, method: "goldmann", time: "10:05" },
          ],
          left: [
            { mmHg: 17, method: "non_contact", time: "10:00" },
            { mmHg: 18, method: "goldmann", time: "10:10" },
          ],
        },
        cct: { right: 540 },
      },
    });
  });

  it("refuses IOP 0 and 90, hex and exponent, and a reading without method or time", () => {
    for (const v of ["0", "90", "0x10", "1e1"]) {
      const r = parseIop({ right_mmHg: v, right_method: "goldmann", right_time: "10:00" });
      expect(r.ok, v).toBe(false);
      if (!r.ok) expect(Object.keys(r.errors), v).toEqual(["right_mmHg"]);
    }
    const bare = parseIop({ left_mmHg_3: "20" });
    expect(bare.ok).toBe(false);
    if (!bare.ok) expect(Object.keys(bare.errors).sort()).toEqual(["left_method_3", "left_time_3"]);
    const cct = parseIop({ right_cct: "1200" });
    expect(cct.ok).toBe(false);
  });

  it("takes the time of the save for a reading typed without one, never refusing it for that", () => {
    const r = parseIop({ right_mmHg: "18", right_method: "goldmann" }, { defaultTime: "14:32" });
    expect(r).toEqual({
      ok: true,
      value: { readings: { right: [{ mmHg: 18, method: "goldmann", time: "14:32" }] }, cct: {} },
    });
    // The method is still needed: which tonometer was used decides how the pressure is read (NICE NG81 1.1.2).
    const noMethod = parseIop({ right_mmHg: "18" }, { defaultTime: "14:32" });
    expect(noMethod.ok).toBe(false);
    if (!noMethod.ok) expect(Object.keys(noMethod.errors)).toEqual(["right_method"]);
  });

  it("averages the readings", () => {
    expect(meanIop([{ mmHg: 25 }, { mmHg: 26 }, { mmHg: 26 }])).toBe(25.7);
    expect(meanIop([])).toBeNull();
  });
});

describe("parseDiscs", () => {
  it("takes the vertical C/D as a number from 0 to 1 and refuses 1.4", () => {
    expect(parseDiscs({ right_disc_cd: "0.45", right_disc_margins: "distinct", left_disc_haem: "on" })).toEqual({
      ok: true,
      value: {
        right: { verticalCd: 0.45, margins: "distinct", swelling: false, haemorrhage: false, pallor: false, notes: "" },
        left: { verticalCd: null, margins: null, swelling: false, haemorrhage: true, pallor: false, notes: "" },
      },
    });
    const r = parseDiscs({ right_disc_cd: "1.4" });
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.errors.right_disc_cd![0]).toMatch(/1\.4 is outside 0 to 1/);
    expect(parseDiscs({ right_disc_swelling: "on", right_disc_margins: "distinct" }).ok).toBe(false);
  });
});

describe("parseFundus", () => {
  it("keeps ticked findings per eye and leaves out an eye with nothing", () => {
    const r = parseFundus({ left_fu_retinalBreak: "on", left_fu_periphery: "horseshoe tear at 2 o'clock" });
    expect(r.ok && r.value).toEqual({
      left: expect.objectContaining({
        retinalBreak: true,
        retinalDetachment: false,
        peripheryNotes: "horseshoe tear at 2 o'clock",
      }),
    });
  });
});

describe("parseDilations", () => {
  const ctx = {
    now: new Date("2026-06-10T11:00:00Z"),
    examinedAt: new Date("2026-06-10T09:30:00Z"),
    timeZone: "Europe/London",
  };
  it("reads drug, strength, eye and the practice's wall time", () => {
    const r = parseDilations(
      { dil1_drug: "tropicamide", dil1_strength: "1", dil1_eye: "both", dil1_at: "2026-06-10T10:40" },
      ctx,
    );
    // 10:40 in London in June is 09:40 UTC (British Summer Time, UTC+1)
    expect(r).toEqual({
      ok: true,
      value: [
        {
          drug: "tropicamide",
          otherDrug: "",
          strengthPercent: 1,
          eye: "both",
          instilledAt: new Date("2026-06-10T09:40:00Z"),
          batch: "",
        },
      ],
    });
  });
  it("refuses a time in the future, a missing strength and an unnamed other drug", () => {
    const r = parseDilations(
      {
        dil1_drug: "tropicamide",
        dil1_strength: "1",
        dil1_eye: "right",
        dil1_at: "2026-06-11T10:00",
        dil2_drug: "other",
        dil2_eye: "left",
        dil2_at: "2026-06-10T10:00",
      },
      ctx,
    );
    expect(r.ok).toBe(false);
    if (!r.ok) {
      expect(r.errors.dil1_at![0]).toMatch(/in the future/);
      expect(r.errors.dil2_strength![0]).toMatch(/strength/);
      expect(r.errors.dil2_other![0]).toMatch(/name the drug/);
    }
  });
});

describe("parseDiagnoses", () => {
  it("records each diagnosis for the right eye, the left eye or both", () => {
    const r = parseDiagnoses({ "dx_H40.0": "right", "dx_H25.9": "both", "dx_Z01.0": "both", "dx_H52.1": "" });
    expect(r.ok && r.value.map((d) => `${d.code}:${d.eye}`)).toEqual(["H25.9:both", "H40.0:right", "Z01.0:both"]);
    expect(parseDiagnoses({ "dx_X99.9": "right" }).ok).toBe(false);
    expect(parseDiagnoses({ "dx_H40.0": "middle" }).ok).toBe(false);
  });
  it("has the routine exam code and the common conditions, each code once", () => {
    const codes = DIAGNOSES.map((d) => d.code);
    expect(new Set(codes).size).toBe(codes.length);
    // WHO ICD-10: Z01.0 examination of eyes and vision; H40 glaucoma; H25 senile cataract; H35.3 macular degeneration; H33 retinal detachment (from memory)
    for (const c of [
      "Z01.0",
      "H40.0",
      "H40.1",
      "H25.9",
      "H35.3",
      "H36.0",
      "H43.8",
      "H33.0",
      "H01.0",
      "H04.1",
      "H18.6",
      "Z96.1",
      "H53.0",
    ])
      expect(codes).toContain(c);
  });
});

describe("edge values of the section parsers", () => {
  it("parseNumber takes both ends of the range and exact steps, and refuses just outside", () => {
    expect(parseNumber("1", "IOP", 1, 80).value).toBe(1);
    expect(parseNumber("80", "IOP", 1, 80).value).toBe(80);
    expect(parseNumber("80.01", "IOP", 1, 80).error).toMatch(/outside 1 to 80/);
    expect(parseNumber("0.99", "IOP", 1, 80).error).toMatch(/outside 1 to 80/);
    expect(parseNumber("4.00", "Add", 0.25, 4, { step: 0.25 }).value).toBe(4);
    expect(parseNumber("+0.75", "Add", 0.25, 4, { step: 0.25 }).value).toBe(0.75);
    expect(parseNumber("   ", "Add", 0.25, 4)).toEqual({ value: null });
    expect(parseNumber(undefined, "Add", 0.25, 4)).toEqual({ value: null });
    for (const t of ["1.", "-0"]) expect(parseNumber(t, "x", -1, 1).error, t).toBeUndefined();
    for (const t of ["--1", "1..2", "1.2.3", "٣", "１２"])
      expect(parseNumber(t, "x", -100, 100).error, t).toMatch(/is not a number/);
  });

  it("parseRxText reads sphere, cylinder and axis and names the field in its refusal", () => {
    expect(parseRxText("-2.25 -0.75 x 175", "R").value).toMatchObject({ sphere: -2.25, cylinder: -0.75, axis: 175 });
    expect(parseRxText("", "R")).toEqual({ value: null });
    for (const t of ["0x10 DS", "1e1 DS", "-2.25 -0.75 x 0x1F", "banana"]) {
      const r = parseRxText(t, "Right final");
      expect(r.value, t).toBeNull();
      expect(r.error, t).toMatch(/^Right final: /);
    }
  });

  it("parseRefractionEye keeps a full row, leaves a blank row out and refuses prism without base or base without prism", () => {
    const full = parseRefractionEye(
      {
        left_rx: "+1.50 -0.50 x 90",
        left_add: "2.00",
        left_prism: "1.5",
        left_base: "in",
        left_vertex: "12",
        left_va: "6/6",
      },
      "left",
      "Final",
      "metric",
    );
    expect(full.ok).toBe(true);
    if (full.ok)
      expect(full.value).toMatchObject({
        rawText: "+1.50 -0.50 x 90",
        addPower: 2,
        prismDioptres: 1.5,
        prismBase: "in",
        vertexMm: 12,
        va: { logMar: 0 },
      });
    expect(parseRefractionEye({}, "left", "Final")).toEqual({ ok: true, value: null });
    const noBase = parseRefractionEye({ right_rx: "-1.00 DS", right_prism: "2" }, "right", "Final");
    expect(noBase.ok).toBe(false);
    if (!noBase.ok) expect(noBase.errors.right_base![0]).toMatch(/base direction/);
    const noPrism = parseRefractionEye({ right_rx: "-1.00 DS", right_base: "up" }, "right", "Final");
    if (!noPrism.ok) expect(noPrism.errors.right_prism![0]).toMatch(/give the prism/);
    else expect.unreachable("a base without a prism was accepted");
    const badBase = parseRefractionEye(
      { right_rx: "-1.00 DS", right_prism: "1", right_base: "sideways" },
      "right",
      "Final",
    );
    if (!badBase.ok) expect(badBase.errors.right_base![0]).toMatch(/up, down, in or out/);
    else expect.unreachable("an unknown base was accepted");
    // An add only (no sphere typed) is refused with a request for the sphere.
    const addOnly = parseRefractionEye({ right_add: "2.00" }, "right", "Final");
    if (!addOnly.ok) expect(addOnly.errors.right_rx![0]).toMatch(/type the sphere/);
    else expect.unreachable("an add without a prescription was accepted");
    // Impossible or ill-formed numbers in the other fields.
    for (const [field, value] of [
      ["right_add", "4.25"],
      ["right_add", "1.10"],
      ["right_add", "0x2"],
      ["right_prism", "1e1"],
      ["right_vertex", "26"],
      ["right_vertex", "12.2"],
    ] as const) {
      const r = parseRefractionEye(
        { right_rx: "-1.00 DS", [field]: value, ...(field === "right_prism" ? { right_base: "up" } : {}) },
        "right",
        "Final",
      );
      expect(r.ok, `${field}=${value}`).toBe(false);
      if (!r.ok) expect(r.errors[field], `${field}=${value}`).toHaveLength(1);
    }
  });

  it("parseDiagnoses refuses a code that is not on the list and an eye that is not right, left or both", () => {
    const code = DIAGNOSES[0]!.code;
    const unknown = parseDiagnoses({ dx_NOT_A_CODE: "right" });
    expect(unknown.ok).toBe(false);
    if (!unknown.ok) expect(unknown.errors.dx_NOT_A_CODE![0]).toMatch(/not on the list/);
    expect(parseDiagnoses({ [`dx_${code}`]: "middle" }).ok).toBe(false);
    expect(parseDiagnoses({ [`dx_${code}`]: "  " })).toEqual({ ok: true, value: [] });
  });

  it("parseDilations refuses malformed and non-existent times and drops put in more than a day before the exam", () => {
    const ctx = {
      now: new Date("2026-03-29T12:00:00Z"),
      examinedAt: new Date("2026-03-29T11:00:00Z"),
      timeZone: "Europe/London",
    };
    const row = (at: string) => ({ dil1_drug: "tropicamide", dil1_strength: "1", dil1_eye: "both", dil1_at: at });
    expect(parseDilations(row("2026-03-29T11:30"), ctx).ok).toBe(true);
    const errorOf = (at: string) => {
      const r = parseDilations(row(at), ctx);
      return r.ok ? null : r.errors.dil1_at![0];
    };
    expect(errorOf("2026-03-29 11:30")).toMatch(/24-hour time/);
    expect(errorOf("2026-03-29T24:00")).toMatch(/24-hour time/);
    // 01:30 on the last Sunday of March does not exist in London: clocks go from 01:00 GMT to 02:00 BST (common practice).
    expect(errorOf("2026-03-29T01:30")).toMatch(/does not exist/);
    expect(errorOf("2026-03-27T09:00")).toMatch(/more than a day before/);
    const strength = parseDilations({ ...row("2026-03-29T11:30"), dil1_strength: "0x1" }, ctx);
    if (!strength.ok) expect(strength.errors.dil1_strength![0]).toMatch(/is not a number/);
    else expect.unreachable("a hex strength was accepted");
    expect(parseDilations({ ...row("2026-03-29T11:30"), dil1_strength: "12" }, ctx).ok).toBe(false);
  });
});
