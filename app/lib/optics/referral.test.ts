import { describe, expect, it } from "vitest";
import { AcuityError, PROMPT_NOTE, RxError, referralPrompts, type ReferralPrompt } from "./index";

const codes = (prompts: ReferralPrompt[]) => prompts.map((p) => `${p.code}:${p.eye}`);

describe("referralPrompts", () => {
  it("returns nothing for unremarkable findings", () => {
    expect(
      referralPrompts({
        iopMmHg: { right: 16, left: 18 },
        blindSpot: { right: { centreXDeg: 15, centreYDeg: -1.5, widthDeg: 5.5, heightDeg: 7.5 } },
        colourVision: { right: { result: "normal" }, left: { result: "normal" } },
        fieldDefect: { right: { present: false } },
        acuity: { right: { bestCorrected: "6/6", previous: "6/6" }, left: { bestCorrected: 0 } },
      }),
    ).toEqual([]);
    expect(referralPrompts({})).toEqual([]);
  });

  it("prompts IOP above 21 mmHg (Hollows & Graham 1966 — from memory), not at 21", () => {
    const prompts = referralPrompts({ iopMmHg: { right: 22, left: 21 } });
    expect(codes(prompts)).toEqual(["IOP_ABOVE_NORMAL:right"]);
    expect(prompts[0]).toMatchObject({ value: 22, message: "Right IOP 22 mmHg is above 21 mmHg" });
    expect(prompts[0]?.source).toMatch(/Hollows FC, Graham PA/);
  });

  it("prompts an IOP difference of 5 mmHg or more between the eyes (common practice)", () => {
    expect(codes(referralPrompts({ iopMmHg: { right: 14, left: 19 } }))).toEqual(["IOP_ASYMMETRY:both"]);
    expect(referralPrompts({ iopMmHg: { right: 14, left: 18 } })).toEqual([]);
  });

  it("prompts an enlarged or displaced blind spot", () => {
    const prompts = referralPrompts({
      blindSpot: {
        right: { centreXDeg: 15, centreYDeg: -1.5, widthDeg: 9, heightDeg: 11 },
        left: { centreXDeg: 21, centreYDeg: -1.5, widthDeg: 5.5, heightDeg: 7.5 },
      },
    });
    expect(codes(prompts)).toEqual(["BLIND_SPOT_ENLARGED:right", "BLIND_SPOT_DISPLACED:left"]);
    expect(prompts[0]?.value).toBe("9° × 11° centred 15° temporal, 1.5° below");
  });

  it("prompts acquired and one-eyed colour-vision deficiency, not a stable congenital one", () => {
    expect(
      codes(
        referralPrompts({
          colourVision: { right: { result: "deficiency suspected", changedFromPrevious: true }, left: { result: "normal" } },
        }),
      ),
    ).toEqual(["COLOUR_VISION_ACQUIRED:right", "COLOUR_VISION_ASYMMETRIC:right"]);
    expect(
      referralPrompts({
        colourVision: {
          right: { result: "deficiency suspected", changedFromPrevious: false },
          left: { result: "deficiency suspected" },
        },
      }),
    ).toEqual([]);
  });

  it("prompts a recorded field defect with its description", () => {
    const prompts = referralPrompts({ fieldDefect: { left: { present: true, description: "superior arcuate defect" } } });
    expect(prompts).toHaveLength(1);
    expect(prompts[0]).toMatchObject({ code: "FIELD_DEFECT", eye: "left", value: "superior arcuate defect" });
    expect(referralPrompts({ fieldDefect: { right: { present: true } } })[0]?.value).toBe("field defect recorded");
  });

  it("prompts unexplained best-corrected acuity worse than 0.30 logMAR (common practice)", () => {
    expect(referralPrompts({ acuity: { right: { bestCorrected: "6/12" } } })).toEqual([]); // on the 0.3 line
    expect(codes(referralPrompts({ acuity: { right: { bestCorrected: "6/18" } } }))).toEqual(["ACUITY_REDUCED:right"]);
    expect(codes(referralPrompts({ acuity: { left: { bestCorrected: 0.4 } } }))).toEqual(["ACUITY_REDUCED:left"]);
    expect(referralPrompts({ acuity: { right: { bestCorrected: "6/18", explained: true } } })).toEqual([]);
  });

  it("prompts an unexplained loss of two lines or more (common practice)", () => {
    expect(codes(referralPrompts({ acuity: { right: { bestCorrected: "6/9.5", previous: "6/6" } } }))).toEqual([
      "ACUITY_DROP:right",
    ]);
    expect(codes(referralPrompts({ acuity: { right: { bestCorrected: "20/25", previous: "20/16" } } }))).toEqual([
      "ACUITY_DROP:right",
    ]);
    expect(referralPrompts({ acuity: { right: { bestCorrected: "6/7.5", previous: "6/6" } } })).toEqual([]);
  });

  it("marks every prompt as a prompt for the optometrist's judgement, with rule and source", () => {
    const prompts = referralPrompts({
      iopMmHg: { right: 30, left: 12 },
      blindSpot: { left: { centreXDeg: 15, centreYDeg: -1.5, widthDeg: 10, heightDeg: 7.5 } },
      colourVision: { left: { result: "deficiency suspected", changedFromPrevious: true } },
      fieldDefect: { right: { present: true } },
      acuity: { left: { bestCorrected: "6/24", previous: "6/6" } },
    });
    expect(prompts.length).toBe(7);
    for (const p of prompts) {
      expect(p.rule.endsWith(PROMPT_NOTE)).toBe(true);
      expect(p.source.length).toBeGreaterThan(0);
      expect(p.message.length).toBeGreaterThan(0);
    }
  });

  it("rejects implausible or unreadable values", () => {
    expect(() => referralPrompts({ iopMmHg: { right: 120 } })).toThrow(/outside 0–80 mmHg/);
    expect(() => referralPrompts({ iopMmHg: { right: Number.NaN } })).toThrow(RxError);
    expect(() => referralPrompts({ acuity: { right: { bestCorrected: "six over six" } } })).toThrow(AcuityError);
  });
});
