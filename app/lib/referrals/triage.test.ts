import { describe, expect, it } from "vitest";
import { isBelowProposal, triage, TriageInputError, type TriageInput } from "./index";

/** A reason's urgency, eye and rule, for compact assertions. */
const summary = (input: TriageInput) => triage(input).reasons.map((r) => `${r.urgency}:${r.eye ?? "-"}:${r.rule}`);

describe("triage vignettes", () => {
  it("proposes nothing for an unremarkable routine visit", () => {
    const out = triage({
      ageYears: 45,
      eyes: {
        R: { iopMmHg: [15, 16], iopMethod: "non-contact", verticalCupDisc: 0.3, vaLogMAR: 0, previousVaLogMAR: 0 },
        L: { iopMmHg: [17], iopMethod: "non-contact", verticalCupDisc: 0.35 },
      },
    });
    expect(out).toEqual({ urgency: null, reasons: [] });
  });

  it("62-year-old with new flashes and a horseshoe tear in the right eye: same day", () => {
    // College of Optometrists GPP C205, emergency (within 24 hours): "symptomatic retinal breaks and tears";
    // GPP A262: "lattice degeneration or retinal break, with symptoms" is an emergency referral.
    const out = triage({ ageYears: 62, eyes: { R: { flashes: true, newFloaters: true, retinalBreak: true }, L: {} } });
    expect(out.urgency).toBe("same_day");
    expect(out.reasons).toHaveLength(1);
    expect(out.reasons[0]).toMatchObject({
      urgency: "same_day",
      eye: "R",
      rule: "Retinal break with flashes, floaters or a shadow in the vision",
    });
    expect(out.reasons[0]!.source).toMatch(/C205/);
    expect(out.reasons[0]!.source).toMatch(/A262/);
  });

  it("myope with floaters and tobacco dust but no break seen: same day", () => {
    // College GPP A262: pigment in the anterior vitreous (tobacco dust) is an emergency referral.
    const out = triage({ ageYears: 48, eyes: { L: { newFloaters: true, vitreousPigment: true } } });
    expect(out.urgency).toBe("same_day");
    expect(summary({ ageYears: 48, eyes: { L: { newFloaters: true, vitreousPigment: true } } })).toEqual([
      "same_day:L:Pigment in the anterior vitreous (tobacco dust)",
    ]);
  });

  it("new floaters alone, retina not yet shown clear: urgent, and says what would settle it", () => {
    // College GPP A259: a suspected break needs a dilated indirect fundus examination; urgency marked common practice.
    const out = triage({ ageYears: 58, eyes: { R: { newFloaters: true } } });
    expect(out.urgency).toBe("urgent");
    expect(out.reasons[0]!.rule).toMatch(/dilated examination/);
    expect(out.reasons[0]!.source).toMatch(/A259/);
    expect(out.reasons[0]!.source).toMatch(/Common practice/);
  });

  it("a curtain over the vision is an emergency even before the retina is seen", () => {
    // College GPP A97: symptoms which strongly suggest a recent retinal tear or detachment.
    expect(triage({ ageYears: 70, eyes: { L: { curtain: true, flashes: true } } }).urgency).toBe("same_day");
  });

  it("retinal detachment recorded: same day", () => {
    // College GPP C205: retinal detachment unless long-standing and asymptomatic.
    expect(summary({ ageYears: 55, eyes: { R: { retinalDetachment: true } } })).toEqual([
      "same_day:R:Retinal detachment",
    ]);
  });

  it("IOP of 45 mmHg: same day whatever the method", () => {
    // College GPP C205: IOP of 40 mmHg or more (independent of cause) is an emergency referral.
    const out = triage({
      ageYears: 71,
      eyes: { R: { iopMmHg: [44, 46], iopMethod: "applanation" }, L: { iopMmHg: [18], iopMethod: "applanation" } },
    });
    expect(out.urgency).toBe("same_day");
    expect(out.reasons[0]).toMatchObject({
      eye: "R",
      rule: "mean IOP 45 mmHg by applanation (readings 44, 46), 40 mmHg or more",
    });
    expect(triage({ ageYears: 71, eyes: { L: { iopMmHg: [45], iopMethod: "non-contact" } } }).urgency).toBe("same_day");
  });

  it("IOP of 37 mmHg: urgent; 35 exactly is not above 35", () => {
    // College GPP C205, urgent (within one week): IOP above 35 mmHg (below 40).
    expect(triage({ ageYears: 66, eyes: { L: { iopMmHg: [37], iopMethod: "applanation" } } })).toMatchObject({
      urgency: "urgent",
      reasons: [{ eye: "L" }],
    });
    // NICE NG81 1.1.4: 35 applanation is 24 or more, so routine referral.
    expect(triage({ ageYears: 66, eyes: { L: { iopMmHg: [35], iopMethod: "applanation" } } }).urgency).toBe("routine");
  });

  it("IOP 25 mmHg by applanation: routine; by non-contact alone: no referral proposed", () => {
    // NICE NG81 1.1.4: confirm an IOP of 24 mmHg or more, then refer; NG81 1.1.2: not solely on non-contact tonometry.
    const gat = triage({ ageYears: 60, eyes: { R: { iopMmHg: [25], iopMethod: "applanation" } } });
    expect(gat.urgency).toBe("routine");
    expect(gat.reasons[0]!.source).toMatch(/NG81.*1\.1\.4/);
    expect(triage({ ageYears: 60, eyes: { R: { iopMmHg: [25, 26], iopMethod: "non-contact" } } })).toEqual({
      urgency: null,
      reasons: [],
    });
    // The mean is used: readings 22 and 25 by applanation average 23.5, below 24 (NG81 1.1.4).
    expect(triage({ ageYears: 60, eyes: { R: { iopMmHg: [22, 25], iopMethod: "applanation" } } }).urgency).toBeNull();
  });

  it("painful red eye with raised pressure: acute angle closure, same day", () => {
    // College GPP C205: acute glaucoma and sudden severe ocular pain are emergencies.
    const out = triage({
      ageYears: 68,
      eyes: { L: { severePain: true, redEye: true, iopMmHg: [52], iopMethod: "rebound" } },
    });
    expect(out.urgency).toBe("same_day");
    expect(out.reasons.map((r) => r.rule)).toContain(
      "Painful red eye with IOP 52 mmHg by rebound tonometry (one reading): possible acute angle closure",
    );
  });

  it("headache and jaw claudication at 74: giant cell arteritis, same day, not tied to one eye", () => {
    // College GPP C205: suspected temporal arteritis; GPP A97 lists GCA as an emergency.
    const out = triage({ ageYears: 74, eyes: {}, gcaSymptoms: true });
    expect(out.urgency).toBe("same_day");
    expect(out.reasons[0]!.eye).toBeUndefined();
    expect(out.reasons[0]!.source).toMatch(/temporal arteritis/);
  });

  it("enlarged blind spot with headaches and swollen discs: same day, both eyes in one reason", () => {
    // College GPP C205: papilloedema is an emergency referral.
    const out = triage({ ageYears: 34, eyes: { R: { discSwelling: true }, L: { discSwelling: true } } });
    expect(summary({ ageYears: 34, eyes: { R: { discSwelling: true }, L: { discSwelling: true } } })).toEqual([
      "same_day:both:Swollen optic disc (possible papilloedema)",
    ]);
    expect(out.urgency).toBe("same_day");
  });

  it("enlarged blind spots with headaches, discs not yet judged swollen: same day as possible papilloedema", () => {
    // College GPP C205: papilloedema is an emergency referral. NHS Bristol, North Somerset and South
    // Gloucestershire Remedy pathway "Papilloedema": with symptoms of raised intracranial pressure (headache)
    // the patient needs emergency assessment. An enlarged blind spot is the field sign of disc swelling (common practice).
    const input: TriageInput = {
      ageYears: 29,
      headache: true,
      eyes: {
        R: { enlargedBlindSpot: true, verticalCupDisc: 0.2 },
        L: { enlargedBlindSpot: true, verticalCupDisc: 0.2 },
      },
    };
    expect(triage(input).urgency).toBe("same_day");
    expect(summary(input)).toEqual([
      "same_day:both:Enlarged blind spot with headache: possible papilloedema (raised intracranial pressure)",
    ]);
    expect(triage(input).reasons[0]!.source).toMatch(/C205.*papilloedema/);
    // Swollen discs with headache: one reason per finding, not the blind spot twice over.
    expect(
      summary({
        ...input,
        eyes: {
          R: { enlargedBlindSpot: true, discSwelling: true },
          L: { enlargedBlindSpot: true, discSwelling: true },
        },
      }),
    ).toEqual(["same_day:both:Swollen optic disc (possible papilloedema) with headache"]);
  });

  it("an enlarged blind spot without headache: soon, to examine the discs; headache alone proposes nothing", () => {
    // NHS Scotland Eyecare Guidelines 11.6 Papilloedema: semi-urgent referral without symptoms of raised intracranial pressure.
    const input: TriageInput = { ageYears: 52, eyes: { R: { enlargedBlindSpot: true } } };
    expect(triage(input)).toMatchObject({
      urgency: "soon",
      reasons: [
        {
          urgency: "soon",
          eye: "R",
          rule: "Enlarged blind spot without headache: examine the optic discs for swelling",
        },
      ],
    });
    expect(triage(input).reasons[0]!.source).toMatch(/NHS Scotland Eyecare Guidelines, 11\.6 Papilloedema/);
    // A headache with normal fields and discs is not a referral on its own (common practice).
    expect(triage({ ageYears: 52, headache: true, eyes: { R: { verticalCupDisc: 0.3 } } })).toEqual({
      urgency: null,
      reasons: [],
    });
  });

  it("anterior uveitis, hyphaema and hypopyon are each same day", () => {
    // College GPP C205: uveitis, hyphaema, hypopyon (emergency, within 24 hours).
    for (const f of [{ anteriorChamberCells: true, redEye: true }, { hyphaema: true }, { hypopyon: true }]) {
      expect(triage({ ageYears: 40, eyes: { R: f } }).urgency).toBe("same_day");
    }
  });

  it("sudden loss of vision in one eye: same day", () => {
    // College GPP C205: unexplained sudden loss of vision.
    expect(
      summary({ ageYears: 80, eyes: { L: { suddenVisionLoss: true, vaLogMAR: 1, previousVaLogMAR: 0.1 } } }),
    ).toEqual(["same_day:L:Sudden loss of vision"]);
  });

  it("new distortion with suspected wet AMD at 79: urgent", () => {
    // NICE NG82: refer suspected wet active AMD urgently to a macular service.
    const out = triage({ ageYears: 79, eyes: { R: { distortion: true, suspectedWetAmd: true } } });
    expect(out.urgency).toBe("urgent");
    expect(out.reasons).toHaveLength(1);
    expect(triage({ ageYears: 79, eyes: { R: { distortion: true } } }).urgency).toBe("urgent");
  });

  it("RAPD: urgent; new diplopia: urgent, or same day with pain", () => {
    // College Annex 4: optic neuritis is urgent; College GPP C205: third nerve palsy with pain is an emergency.
    expect(triage({ ageYears: 29, eyes: { L: { rapd: true } } }).urgency).toBe("urgent");
    expect(triage({ ageYears: 61, eyes: {}, newDiplopia: true }).urgency).toBe("urgent");
    expect(
      triage({ ageYears: 61, eyes: { R: { severePain: true } }, newDiplopia: true }).reasons.map((r) => r.rule),
    ).toContain("New double vision with eye pain (possible third nerve palsy)");
  });

  it("suspicious discs and a two-line loss are routine and soon", () => {
    // Common practice thresholds (C/D 0.7, asymmetry 0.2, two lines), NICE NG81 1.1.1 for the disc assessment.
    const out = triage({
      ageYears: 57,
      eyes: {
        R: { verticalCupDisc: 0.75, discHaemorrhage: true },
        L: { verticalCupDisc: 0.4, vaLogMAR: 0.3, previousVaLogMAR: 0.1 },
      },
    });
    expect(out.urgency).toBe("soon");
    expect(out.reasons.map((r) => `${r.urgency}:${r.eye}`)).toEqual(["soon:R", "soon:L", "routine:R", "routine:both"]);
  });

  it("urgency is the highest of the reasons, and reasons come highest first", () => {
    const out = triage({
      ageYears: 66,
      eyes: { R: { verticalCupDisc: 0.8, iopMmHg: [38], iopMethod: "applanation" }, L: { hyphaema: true } },
    });
    expect(out.urgency).toBe("same_day");
    expect(out.reasons.map((r) => r.urgency)).toEqual(["same_day", "urgent", "routine"]);
  });

  it("every reason names a source and keeps citations out of the rule", () => {
    const out = triage({
      ageYears: 70,
      gcaSymptoms: true,
      newDiplopia: true,
      eyes: {
        R: {
          retinalBreak: true,
          flashes: true,
          iopMmHg: [41],
          discSwelling: true,
          rapd: true,
          suspectedWetAmd: true,
          hyphaema: true,
        },
        L: { retinalBreak: true, verticalCupDisc: 0.9 },
      },
    });
    for (const r of out.reasons) {
      expect(r.source.length).toBeGreaterThan(10);
      expect(r.rule).not.toMatch(/NICE|College|NG8|C205|A26/);
    }
  });

  it("refuses implausible findings with the field named", () => {
    expect(() => triage({ ageYears: 50, eyes: { R: { iopMmHg: [0] } } })).toThrow(TriageInputError);
    expect(() => triage({ ageYears: 50, eyes: { R: { iopMmHg: [90] } } })).toThrow(/Right IOP reading 90/);
    expect(() => triage({ ageYears: 50, eyes: { L: { verticalCupDisc: 1.4 } } })).toThrow(
      /Left vertical cup\/disc ratio 1.4/,
    );
    expect(() => triage({ ageYears: 50, eyes: { L: { vaLogMAR: 3.5 } } })).toThrow(/acuity 3.5/);
    expect(() => triage({ ageYears: -1, eyes: {} })).toThrow(/Age/);
    expect(() => triage({ ageYears: 50, eyes: { X: {} } as never })).toThrow(/Unknown eye/);
    expect(() => triage({ ageYears: 50, headache: "yes" as never, eyes: {} })).toThrow(
      /headache must be true or false/,
    );
    expect(() => triage({ ageYears: 50, eyes: { R: { enlargedBlindSpot: 1 as never } } })).toThrow(
      /Right enlargedBlindSpot/,
    );
  });

  it("compares a chosen urgency with the proposal", () => {
    expect(isBelowProposal("urgent", "same_day")).toBe(true);
    expect(isBelowProposal("same_day", "urgent")).toBe(false);
    expect(isBelowProposal("routine", null)).toBe(false);
  });
});
