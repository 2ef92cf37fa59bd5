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

  it("prompts a mean applanation IOP of 24 mmHg or more (NICE NG81 1.1.4), not 23.5", () => {
    const prompts = referralPrompts({
      iop: {
        right: { readings: [24, 25], method: "applanation" },
        left: { readings: [22, 25], method: "applanation" },
      },
    });
    expect(codes(prompts)).toEqual(["IOP_ABOVE_NORMAL:right"]);
    expect(prompts[0]).toMatchObject({
      action: "consider referral",
      value: 24.5,
      message: "Right mean IOP 24.5 mmHg by applanation (readings 24, 25): 24 mmHg or more",
    });
    expect(prompts[0]?.source).toMatch(/NG81.*1\.1\.4/);
  });

  it("asks for a repeat by applanation, not a referral, when a raised IOP rests on non-contact tonometry (NICE NG81 1.1.2)", () => {
    const prompts = referralPrompts({ iop: { right: { readings: [26], method: "non-contact" } } });
    expect(codes(prompts)).toEqual(["IOP_REPEAT:right"]);
    expect(prompts[0]).toMatchObject({
      action: "repeat measurement",
      message:
        "Right IOP 26 mmHg by non-contact tonometry (one reading): 24 mmHg or more — repeat with Goldmann-type applanation before deciding to refer",
    });
    expect(prompts[0]?.source).toMatch(/NG81, recommendation 1\.1\.2/);
    // A single value without a method is treated the same way.
    expect(codes(referralPrompts({ iopMmHg: { right: 26 } }))).toEqual(["IOP_REPEAT:right"]);
  });

  it("prompts referral at a mean of 40 mmHg or more by any method (College of Optometrists GPP C205)", () => {
    const prompts = referralPrompts({ iop: { left: { readings: [41, 43], method: "non-contact" } } });
    expect(codes(prompts)).toEqual(["IOP_ABOVE_NORMAL:left"]);
    expect(prompts[0]?.source).toMatch(/C205/);
  });

  it("uses the mean for asymmetry, and says a single non-contact reading should be repeated (common practice)", () => {
    expect(
      codes(
        referralPrompts({
          iop: {
            right: { readings: [14, 15, 15], method: "applanation" },
            left: { readings: [19, 20, 20], method: "applanation" },
          },
        }),
      ),
    ).toEqual(["IOP_ASYMMETRY:both"]);
    // Single readings of 14 and 19 differ by 5, but the means of three readings each do not.
    expect(
      referralPrompts({
        iop: {
          right: { readings: [14, 16, 17], method: "non-contact" },
          left: { readings: [19, 18, 17], method: "non-contact" },
        },
      }),
    ).toEqual([]);
    const single = referralPrompts({ iopMmHg: { right: 14, left: 19 } });
    expect(codes(single)).toEqual(["IOP_REPEAT:both"]);
    expect(single[0]?.message).toMatch(
      /on a single reading \(R 14, L 19\) — take several readings per eye, or measure by applanation/,
    );
    expect(single[0]?.action).toBe("repeat measurement");
    expect(referralPrompts({ iopMmHg: { right: 14, left: 18 } })).toEqual([]);
  });

  it("prompts a blue-yellow defect found for the first time, not one already on record (common practice)", () => {
    const prompts = referralPrompts({
      colourVision: {
        right: { result: "deficiency suspected", kind: "blue-yellow" },
        left: { result: "deficiency suspected", kind: "blue-yellow", blueYellowBefore: true },
      },
    });
    expect(codes(prompts)).toEqual(["COLOUR_VISION_BLUE_YELLOW:right"]);
    expect(prompts[0]).toMatchObject({
      action: "consider referral",
      message: "Right eye: blue-yellow colour-vision defect found for the first time",
    });
    // A red-green defect alike in both eyes and unchanged is congenital-looking: no prompt.
    expect(
      referralPrompts({
        colourVision: {
          right: { result: "deficiency suspected", kind: "red-green" },
          left: { result: "deficiency suspected", kind: "red-green" },
        },
      }),
    ).toEqual([]);
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
          colourVision: {
            right: { result: "deficiency suspected", changedFromPrevious: true },
            left: { result: "normal" },
          },
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
    const prompts = referralPrompts({
      fieldDefect: { left: { present: true, description: "superior arcuate defect" } },
    });
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
      iop: { right: { readings: [30, 31], method: "applanation" }, left: { readings: [12], method: "applanation" } },
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
    expect(() => referralPrompts({ iopMmHg: { right: 120 } })).toThrow(/outside 1–80 mmHg/);
    expect(() => referralPrompts({ iop: { right: { readings: [0] } } })).toThrow(/outside 1–80 mmHg/);
    expect(() => referralPrompts({ iopMmHg: { right: Number.NaN } })).toThrow(RxError);
    expect(() => referralPrompts({ acuity: { right: { bestCorrected: "six over six" } } })).toThrow(AcuityError);
  });
});
