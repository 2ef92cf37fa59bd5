/**
 * Referral triage: from one visit's findings, the urgency of referral the published UK guidance
 * proposes, with every reason in plain clinical words and the guidance it comes from.
 *
 * A proposal for the optometrist, never a decision: local referral protocols and the clinician's
 * judgement govern. Plain TypeScript, no framework or database imports.
 *
 * Urgency names are the project's own: `same_day` is the guidance's "emergency (within 24
 * hours)", `urgent` its "urgent (within one week)"; `soon` and `routine` cover the rest.
 */

export type Eye = "R" | "L";
export type TriageUrgency = "same_day" | "urgent" | "soon" | "routine";

export interface EyeFindings {
  /** Every reading this visit (mmHg). */
  iopMmHg?: number[];
  iopMethod?: "applanation" | "non-contact" | "rebound" | "other";
  /** Best-corrected distance acuity this visit. */
  vaLogMAR?: number;
  /** Best-corrected distance acuity at the previous visit. */
  previousVaLogMAR?: number;
  suddenVisionLoss?: boolean;
  flashes?: boolean;
  newFloaters?: boolean;
  curtain?: boolean;
  severePain?: boolean;
  redEye?: boolean;
  /** New metamorphopsia. */
  distortion?: boolean;
  /** 0..1 */
  verticalCupDisc?: number;
  discSwelling?: boolean;
  discHaemorrhage?: boolean;
  rapd?: boolean;
  retinalBreak?: boolean;
  retinalDetachment?: boolean;
  vitreousPigment?: boolean;
  anteriorChamberCells?: boolean;
  hyphaema?: boolean;
  hypopyon?: boolean;
  suspectedWetAmd?: boolean;
  /** Optional, beyond the base contract: the plotted blind spot is enlarged (see `checkBlindSpot` in the optics engine). */
  enlargedBlindSpot?: boolean;
}

export interface TriageInput {
  ageYears: number;
  eyes: Partial<Record<Eye, EyeFindings>>;
  newDiplopia?: boolean;
  gcaSymptoms?: boolean;
  /** Optional, beyond the base contract: the patient reports headache at this visit. */
  headache?: boolean;
}

export interface TriageReason {
  urgency: TriageUrgency;
  eye?: Eye | "both";
  rule: string;
  source: string;
}

export interface TriageResult {
  urgency: TriageUrgency | null;
  reasons: TriageReason[];
}

/** Highest first. */
export const TRIAGE_ORDER: readonly TriageUrgency[] = ["same_day", "urgent", "soon", "routine"];
const rank = (u: TriageUrgency) => TRIAGE_ORDER.indexOf(u);

/** Thrown when a finding is not a plausible value; the message names the field. */
export class TriageInputError extends Error {
  override name = "TriageInputError";
}

// ------------------------------------------------------------------ sources

const COLLEGE_C205 =
  "College of Optometrists, Guidance for Professional Practice, C205 Urgency of referrals: emergency referral (within 24 hours)";
const COLLEGE_C205_URGENT =
  "College of Optometrists, Guidance for Professional Practice, C205 Urgency of referrals: urgent referral (within one week)";
const COLLEGE_A262 =
  "College of Optometrists, Guidance for Professional Practice, A262 (patients presenting with flashes and floaters): emergency referrals";
const COLLEGE_A97 =
  "College of Optometrists, Guidance for Professional Practice, A97 (definition of an emergency): symptoms which strongly suggest a recent retinal tear or detachment";
const COLLEGE_A259 =
  "College of Optometrists, Guidance for Professional Practice, A259: if a retinal break is suspected, examine the anterior vitreous for pigment and perform a dilated fundus examination with an indirect technique";
const COLLEGE_ANNEX4 =
  "College of Optometrists, Guidance for Professional Practice, Annex 4 Urgency of referrals table";
const NICE_NG81_114 =
  "NICE guideline NG81 (Glaucoma: diagnosis and management), recommendation 1.1.4: confirm an IOP of 24 mmHg or more on another occasion before deciding to refer";
const NICE_NG81_111 =
  "NICE guideline NG81, recommendation 1.1.1: optic nerve assessment is among the tests before referral for chronic open angle glaucoma and related conditions";
const NICE_NG82 =
  "NICE guideline NG82 (Age-related macular degeneration): refer people with suspected late AMD (wet active) urgently to a macular service";
const COMMON = "Common practice";
/*
 * Papilloedema. The College's Clinical Management Guideline on papilloedema was not found in the
 * reference search; the rules below rest on the College's C205 emergency list (papilloedema) and on
 * two published NHS pathways that were found, both treating disc swelling with symptoms of raised
 * intracranial pressure (headache) as the most urgent case.
 */
const NHS_SCOTLAND_PAPILLOEDEMA =
  "NHS Scotland Eyecare Guidelines, 11.6 Papilloedema: urgent referral, with images, if symptoms of raised intracranial pressure (headache worse in the morning or on coughing, straining or changing posture; nausea or vomiting); semi-urgent otherwise";
const BNSSG_PAPILLOEDEMA =
  "NHS Bristol, North Somerset and South Gloucestershire Remedy pathway, Papilloedema: papilloedema with symptoms or signs of raised intracranial pressure needs emergency admission; all suspected disc swelling is referred";

// --------------------------------------------------------------- thresholds

/** Mean IOP (mmHg) at or above which referral is an emergency, whatever the cause (College C205). */
export const IOP_EMERGENCY_MMHG = 40;
/** Mean IOP (mmHg) above which referral is urgent (College C205 urgent list: IOP > 35 mmHg). */
export const IOP_URGENT_ABOVE_MMHG = 35;
/** Mean IOP (mmHg) at or above which a confirmed reading is referred (NICE NG81 1.1.4). */
export const IOP_REFER_MMHG = 24;
/** Vertical cup/disc ratio at or above which the disc is referred as suspicious. // common practice */
export const CUP_DISC_REFER = 0.7;
/** Difference in vertical cup/disc ratio between the eyes that is referred. // common practice */
export const CUP_DISC_ASYMMETRY = 0.2;
/** Loss of best-corrected acuity (logMAR) since the previous visit that is referred: two lines. // common practice */
export const VA_LOSS_LOGMAR = 0.2;

// ---------------------------------------------------------------- validation

const FLAGS = [
  "suddenVisionLoss",
  "flashes",
  "newFloaters",
  "curtain",
  "severePain",
  "redEye",
  "distortion",
  "discSwelling",
  "discHaemorrhage",
  "rapd",
  "retinalBreak",
  "retinalDetachment",
  "vitreousPigment",
  "anteriorChamberCells",
  "hyphaema",
  "hypopyon",
  "suspectedWetAmd",
  "enlargedBlindSpot",
] as const;
const METHODS = ["applanation", "non-contact", "rebound", "other"] as const;

function check(ok: boolean, message: string) {
  if (!ok) throw new TriageInputError(message);
}

function validate(input: TriageInput) {
  check(input !== null && typeof input === "object", "Triage needs the visit's findings");
  check(
    Number.isFinite(input.ageYears) && input.ageYears >= 0 && input.ageYears <= 130,
    `Age ${String(input.ageYears)} is not between 0 and 130 years`,
  );
  check(input.eyes !== null && typeof input.eyes === "object", "Triage needs the findings per eye (eyes)");
  for (const key of Object.keys(input.eyes)) check(key === "R" || key === "L", `Unknown eye "${key}" (use R or L)`);
  for (const k of ["newDiplopia", "gcaSymptoms", "headache"] as const)
    if (input[k] !== undefined) check(typeof input[k] === "boolean", `${k} must be true or false`);
  for (const eye of ["R", "L"] as const) {
    const f = input.eyes[eye];
    if (f === undefined) continue;
    const name = eye === "R" ? "Right" : "Left";
    if (f.iopMmHg !== undefined) {
      check(Array.isArray(f.iopMmHg), `${name} IOP readings must be a list`);
      for (const r of f.iopMmHg)
        check(
          Number.isFinite(r) && r >= 1 && r <= 80,
          `${name} IOP reading ${String(r)} mmHg is not between 1 and 80 mmHg`,
        );
    }
    if (f.iopMethod !== undefined)
      check(
        (METHODS as readonly string[]).includes(f.iopMethod),
        `${name} IOP method "${String(f.iopMethod)}" is not one of ${METHODS.join(", ")}`,
      );
    for (const k of ["vaLogMAR", "previousVaLogMAR"] as const) {
      const v = f[k];
      if (v !== undefined)
        check(
          Number.isFinite(v) && v >= -0.5 && v <= 3,
          `${name} ${k === "vaLogMAR" ? "acuity" : "previous acuity"} ${String(v)} logMAR is not between -0.5 and 3.0`,
        );
    }
    if (f.verticalCupDisc !== undefined)
      check(
        Number.isFinite(f.verticalCupDisc) && f.verticalCupDisc >= 0 && f.verticalCupDisc <= 1,
        `${name} vertical cup/disc ratio ${String(f.verticalCupDisc)} is not between 0 and 1`,
      );
    for (const k of FLAGS)
      if (f[k] !== undefined) check(typeof f[k] === "boolean", `${name} ${k} must be true or false`);
  }
}

// --------------------------------------------------------------------- rules

const mean = (xs: number[]) => xs.reduce((a, b) => a + b, 0) / xs.length;
const fmt = (x: number) => (Math.round(x * 10) / 10).toString();
const methodWords: Record<NonNullable<EyeFindings["iopMethod"]>, string> = {
  applanation: "applanation",
  "non-contact": "non-contact tonometry",
  rebound: "rebound tonometry",
  other: "tonometry",
};

function iopText(f: EyeFindings): string {
  const readings = f.iopMmHg ?? [];
  const method = f.iopMethod ? ` by ${methodWords[f.iopMethod]}` : "";
  if (readings.length === 1) return `IOP ${fmt(readings[0]!)} mmHg${method} (one reading)`;
  return `mean IOP ${fmt(mean(readings))} mmHg${method} (readings ${readings.map(fmt).join(", ")})`;
}

function eyeRules(eye: Eye, f: EyeFindings, input: TriageInput): TriageReason[] {
  const out: TriageReason[] = [];
  const add = (urgency: TriageUrgency, rule: string, source: string) => out.push({ urgency, eye, rule, source });
  const symptomatic = f.flashes === true || f.newFloaters === true || f.curtain === true;

  // Posterior segment: retinal detachment and breaks.
  if (f.retinalDetachment)
    add("same_day", "Retinal detachment", `${COLLEGE_C205}: retinal detachment unless long-standing and asymptomatic`);
  if (f.retinalBreak && symptomatic)
    add(
      "same_day",
      "Retinal break with flashes, floaters or a shadow in the vision",
      `${COLLEGE_C205}: symptomatic retinal breaks and tears; ${COLLEGE_A262}`,
    );
  if (f.retinalBreak && !symptomatic)
    add(
      "soon",
      "Retinal break without symptoms",
      `${COMMON}: an asymptomatic hole or tear does not always lead to detachment (College of Optometrists, Guidance for Professional Practice, A263); refer for an opinion`,
    );
  if (f.vitreousPigment)
    add(
      "same_day",
      "Pigment in the anterior vitreous (tobacco dust)",
      `${COLLEGE_A262}; ${COLLEGE_C205}: vitreous detachment symptoms with pigment in the vitreous`,
    );
  if (f.curtain && !f.retinalDetachment) add("same_day", "Shadow or curtain across the vision", COLLEGE_A97);
  if ((f.flashes || f.newFloaters) && !f.retinalBreak && !f.retinalDetachment && !f.vitreousPigment && !f.curtain) {
    add(
      "urgent",
      `New ${[f.flashes && "flashes", f.newFloaters && "floaters"].filter(Boolean).join(" and ")} without a retinal break found: refer unless a dilated examination of the peripheral retina has excluded a break`,
      `${COLLEGE_A259}; ${COMMON} for the urgency when the retina has not been fully examined`,
    );
  }

  // Vision and pain.
  if (f.suddenVisionLoss)
    add("same_day", "Sudden loss of vision", `${COLLEGE_C205}: unexplained sudden loss of vision`);
  if (f.severePain) add("same_day", "Sudden severe eye pain", `${COLLEGE_C205}: sudden severe ocular pain`);

  // Anterior segment.
  if (f.anteriorChamberCells)
    add(
      "same_day",
      `Cells in the anterior chamber (anterior uveitis)${f.redEye ? " with a red eye" : ""}`,
      `${COLLEGE_C205}: uveitis; ${COLLEGE_ANNEX4}: iritis/uveitis within 24 hours`,
    );
  if (f.hyphaema) add("same_day", "Blood in the anterior chamber (hyphaema)", `${COLLEGE_C205}: hyphaema`);
  if (f.hypopyon) add("same_day", "Pus in the anterior chamber (hypopyon)", `${COLLEGE_C205}: hypopyon`);

  // Pressure: the mean of this visit's readings.
  const readings = f.iopMmHg ?? [];
  if (readings.length) {
    const m = mean(readings);
    const acute = f.severePain === true && f.redEye === true;
    if (acute && m > 30) {
      // common practice: a painful red eye with a raised pressure is acute angle closure until shown otherwise.
      add(
        "same_day",
        `Painful red eye with ${iopText(f)}: possible acute angle closure`,
        `${COLLEGE_C205}: acute glaucoma; ${COMMON} for the pressure level`,
      );
    }
    if (m >= IOP_EMERGENCY_MMHG)
      add(
        "same_day",
        `${iopText(f)}, ${IOP_EMERGENCY_MMHG} mmHg or more`,
        `${COLLEGE_C205}: IOP of 40 mmHg or more, independent of cause`,
      );
    else if (m > IOP_URGENT_ABOVE_MMHG)
      add("urgent", `${iopText(f)}, above ${IOP_URGENT_ABOVE_MMHG} mmHg`, `${COLLEGE_C205_URGENT}: IOP above 35 mmHg`);
    else if (m >= IOP_REFER_MMHG) {
      if (f.iopMethod === "applanation") {
        add("routine", `${iopText(f)}, ${IOP_REFER_MMHG} mmHg or more`, NICE_NG81_114);
      }
      // Other methods: no referral is proposed on that reading; the exam prompts ask for a repeat by applanation (NG81 1.1.2).
    }
  }

  // Optic nerve.
  if (f.discSwelling)
    add(
      "same_day",
      `Swollen optic disc (possible papilloedema)${input.headache ? " with headache" : ""}`,
      `${COLLEGE_C205}: papilloedema${input.headache ? `; ${BNSSG_PAPILLOEDEMA}` : ""}`,
    );
  // An enlarged blind spot is how a swollen disc shows on the field plot (common practice).
  if (f.enlargedBlindSpot && !f.discSwelling) {
    if (input.headache) {
      add(
        "same_day",
        "Enlarged blind spot with headache: possible papilloedema (raised intracranial pressure)",
        `${COLLEGE_C205}: papilloedema; ${BNSSG_PAPILLOEDEMA}; ${COMMON}: an enlarged blind spot is a field sign of disc swelling`,
      );
    } else {
      add(
        "soon",
        "Enlarged blind spot without headache: examine the optic discs for swelling",
        `${COMMON}: an enlarged blind spot is a field sign of disc swelling; ${NHS_SCOTLAND_PAPILLOEDEMA}`,
      );
    }
  }
  if (f.rapd)
    add(
      "urgent",
      "Relative afferent pupillary defect",
      `${COLLEGE_ANNEX4}: optic neuritis under urgent; ${COMMON}: a relative afferent pupillary defect signals optic nerve or extensive retinal disease`,
    );
  if (f.discHaemorrhage)
    add(
      "soon",
      "Haemorrhage at the optic disc margin",
      `${COMMON}: a disc haemorrhage is a sign of glaucoma or its progression; ${NICE_NG81_111}`,
    );
  if (f.verticalCupDisc !== undefined && f.verticalCupDisc >= CUP_DISC_REFER - 1e-9)
    add(
      "routine",
      `Vertical cup/disc ratio ${f.verticalCupDisc.toFixed(2)}, ${CUP_DISC_REFER.toFixed(1)} or more`,
      `${COMMON} (threshold); ${NICE_NG81_111}`,
    );

  // Macula.
  if (f.suspectedWetAmd)
    add(
      "urgent",
      "Suspected wet (neovascular) age-related macular degeneration",
      `${NICE_NG82}; ${COMMON}: local pathways fast-track these within a week or sooner`,
    );
  if (f.distortion && !f.suspectedWetAmd)
    add(
      "urgent",
      "New distortion of straight lines (metamorphopsia)",
      `${COMMON}: new metamorphopsia is treated as wet AMD until shown otherwise; ${NICE_NG82}`,
    );

  // Acuity change.
  if (f.vaLogMAR !== undefined && f.previousVaLogMAR !== undefined && !f.suddenVisionLoss) {
    const loss = f.vaLogMAR - f.previousVaLogMAR;
    if (loss >= VA_LOSS_LOGMAR - 0.01)
      add(
        "soon",
        `Best-corrected acuity ${loss.toFixed(2)} logMAR worse than at the previous visit (two lines or more)`,
        `${COMMON}; ${COLLEGE_ANNEX4}: a sudden change in vision within two weeks is urgent`,
      );
  }
  void input;
  return out;
}

/**
 * Proposes the urgency of referral for one visit. `urgency` is the highest urgency among the
 * reasons, null when nothing calls for referral. Reasons come highest first; the same rule
 * found in both eyes is given once with eye "both".
 *
 * @throws TriageInputError when a value is implausible (IOP outside 1–80 mmHg, C/D outside
 * 0–1, acuity outside −0.5 to 3.0 logMAR, age outside 0–130).
 */
export function triage(input: TriageInput): TriageResult {
  validate(input);
  const reasons: TriageReason[] = [];
  for (const eye of ["R", "L"] as const) {
    const f = input.eyes[eye];
    if (f) reasons.push(...eyeRules(eye, f, input));
  }

  // Both eyes: the same rule in R and L becomes one reason.
  const merged: TriageReason[] = [];
  for (const r of reasons) {
    const twin = merged.find(
      (m) => m.rule === r.rule && m.urgency === r.urgency && m.eye !== r.eye && m.eye !== "both",
    );
    if (twin) twin.eye = "both";
    else merged.push({ ...r });
  }

  const right = input.eyes.R?.verticalCupDisc;
  const left = input.eyes.L?.verticalCupDisc;
  if (right !== undefined && left !== undefined && Math.abs(right - left) >= CUP_DISC_ASYMMETRY - 1e-9) {
    merged.push({
      urgency: "routine",
      eye: "both",
      rule: `Cup/disc ratios differ between the eyes by ${Math.abs(right - left).toFixed(2)} (R ${right.toFixed(2)}, L ${left.toFixed(2)})`,
      source: `${COMMON} (asymmetry of 0.2 or more); ${NICE_NG81_111}`,
    });
  }

  if (input.gcaSymptoms) {
    merged.push({
      urgency: "same_day",
      rule: `Symptoms of giant cell arteritis (for example new headache, scalp tenderness, jaw pain on chewing)${input.ageYears < 50 ? "; uncommon under 50 but not excluded" : ""}`,
      source: `${COLLEGE_C205}: suspected temporal arteritis; ${COLLEGE_ANNEX4}: suspected temporal arteritis, emergency as soon as possible`,
    });
  }
  if (input.newDiplopia) {
    const painful = input.eyes.R?.severePain === true || input.eyes.L?.severePain === true;
    merged.push(
      painful
        ? {
            urgency: "same_day",
            rule: "New double vision with eye pain (possible third nerve palsy)",
            source: `${COLLEGE_C205}: third nerve palsy with pain`,
          }
        : {
            urgency: "urgent",
            rule: "New double vision",
            source: `${COMMON}: sudden-onset diplopia is on local urgent referral lists; ${COLLEGE_C205}: third nerve palsy with pain is an emergency`,
          },
    );
  }

  merged.sort((a, b) => rank(a.urgency) - rank(b.urgency));
  const urgency = merged.length ? merged[0]!.urgency : null;
  return { urgency, reasons: merged };
}

/** The urgency of a choice compared with the proposal: true when the choice is lower. */
export function isBelowProposal(chosen: TriageUrgency, proposed: TriageUrgency | null): boolean {
  return proposed !== null && rank(chosen) > rank(proposed);
}
