/**
 * The demo caseload: 400+ fictional patients with up to five years of signed exams, and the
 * cases the demo walks through (children whose myopia progresses, an anisometrope, an abnormal
 * colour-vision result, an enlarged blind spot with raised IOP, contact-lens wearers). Every
 * name is invented; e-mail addresses use the reserved .test domain. Deterministic: the same
 * pseudo-random sequence and a fixed anchor date, so every run builds the same practice.
 */
import { and, eq, inArray, like, sql } from "drizzle-orm";
import type { NodePgDatabase } from "drizzle-orm/node-postgres";
import * as schema from "../app/db/schema";
import { type SphCyl } from "../app/lib/optics";
import { DIAGNOSES } from "../app/lib/exam/sections";
import { addDays, localParts, wallTimeToInstant, weekdayOf } from "../app/lib/scheduling/time";
import { isBankHoliday } from "./closures";
import { fitDemoLens } from "./contact-lenses";
import { DEMO_PATIENT, DEMO_PRACTICE } from "./demo-practice";
import { FIRST_NAMES } from "./names";
import { DEMO_GPS, TRIAGE_CASES, VA_TEXT, type TriageFindings } from "./triage-cases";

type Tx = Parameters<Parameters<NodePgDatabase<typeof schema>["transaction"]>[0]>[0];
const {
  patients,
  exams,
  examRefractions,
  examAcuity,
  examIop,
  examColourVision,
  examVisualFields,
  examHistory,
  examAssessment,
  examDiagnoses,
  prescriptions,
  prescriptionEyes,
  users,
} = schema;
const { examRedFlags, examPupils, examAnteriorChamber, examDiscs, examFundus, examDilations, examCornealThickness } =
  schema;

export const CASELOAD_DOMAIN = "caseload.dioptra-demo.test";
/** The caseload's "today"; exams lie up to five years before it. */
export const ANCHOR = new Date("2026-11-20T10:00:00Z");
const DAY = 864e5;

/** mulberry32: a small deterministic PRNG. */
export function prng(seed: number) {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

const FIRST = FIRST_NAMES;
export const GENERAL_LAST_NAMES = [
  "Abernethy",
  "Blackthorn",
  "Carraway",
  "Dunmore",
  "Everleigh",
  "Fothergill",
  "Greenhalgh",
  "Hartigan",
  "Illingworth",
  "Jessop",
  "Kilbride",
  "Lowther",
  "Merriweather",
  "Nettlefold",
  "Oakenshaw",
  "Pendleford",
  "Quarrington",
  "Rushworth",
  "Saltonstall",
  "Thistlewood",
  "Underhill",
  "Vexworth",
  "Wetherby",
  "Yarrowby",
  "Ashcombe",
  "Birchenough",
  "Coldwell",
  "Dewhurst",
  "Eastwood",
  "Farrington",
  "Gallowglass",
  "Hesketh",
  "Ivesdale",
  "Jellicoe",
  "Kettleborough",
  "Larkworthy",
  "Mossop",
  "Northcote",
  "Ormerod",
  "Pilkington",
];
const LAST = GENERAL_LAST_NAMES;

const q = (x: number, step = 0.25) => Math.round(x / step) * step || 0;
const isoDate = (d: Date) => d.toISOString().slice(0, 10);

type Case = {
  first: string;
  last: string;
  dob: string;
  sex: "female" | "male" | "other" | "unknown";
  /** Final refraction at each exam, oldest first, per eye. */
  exams: {
    at: Date;
    right: SphCyl;
    left: SphCyl;
    add?: number;
    iop?: [number, number];
    colour?: "normal" | "red_green";
    plates?: number;
    blindSpot?: { w: number; h: number };
    fieldDefect?: string;
    reason: string;
    diagnoses: string[];
    symptoms?: string;
    findings?: TriageFindings;
    /** An ordinary caseload exam (its findings are complete: disc, pupils, pressures, acuity). */
    general?: boolean;
    /** A cycloplegic refraction was done (children); under 7 it replaces the subjective. */
    cycloplegic?: boolean;
  }[];
  contactLens?: boolean;
  allergies?: string;
  medications?: string;
};

function examDates(rand: () => number, n: number) {
  const dates: Date[] = [];
  // About a third of patients were last seen one to three years ago, so recalls fall due.
  const away = rand() < 0.3 ? 365 * (1 + Math.floor(rand() * 2)) : 0;
  let t = ANCHOR.getTime() - (Math.floor(rand() * 200) + away) * DAY;
  for (let i = 0; i < n; i++) {
    dates.unshift(new Date(t + Math.floor(rand() * 8) * 3600e3));
    t -= (330 + Math.floor(rand() * 70)) * DAY;
  }
  return dates;
}

const ageAt = (dob: string, at: Date) => (at.getTime() - Date.parse(dob)) / (365.25 * DAY);

/** Distance acuity lines of a metric chart with their logMAR (log10 of denominator / 6). */
const LINES: [string, number][] = [
  ["6/4", -0.18],
  ["6/5", -0.08],
  ["6/6", 0],
  ["6/7.5", 0.1],
  ["6/9", 0.18],
  ["6/12", 0.3],
  ["6/18", 0.48],
  ["6/24", 0.6],
  ["6/36", 0.78],
  ["6/60", 1],
];
/** The chart line nearest a logMAR value. */
export function acuityLine(logMar: number): [string, number] {
  return LINES.reduce((best, line) => (Math.abs(line[1] - logMar) < Math.abs(best[1] - logMar) ? line : best));
}

/**
 * Unaided distance acuity from the refraction: blur grows with the myopic spherical equivalent and
 * the cylinder; a hyperope sees clearly while young enough to accommodate (common practice, a rough rule).
 */
function unaidedLogMar(rx: SphCyl, age: number, best: number) {
  const se = rx.sphere + rx.cylinder / 2;
  const blur = se < 0 ? -se * 0.38 : age >= 40 ? se * 0.2 : Math.max(0, se - 2) * 0.15;
  return acuityLine(Math.min(1, best + blur + Math.abs(rx.cylinder) * 0.12))[1];
}

type Condition =
  "none" | "child" | "myopic_child" | "amblyopia" | "cataract" | "amd" | "glaucoma_suspect" | "glaucoma" | "diabetic";

const MEDICATIONS: Partial<Record<Condition, string>> = {
  glaucoma: "Latanoprost 0.005% eye drops, one drop both eyes at night",
  diabetic: "Metformin 500 mg twice daily",
};

function generalCase(rand: () => number, i: number): Case {
  const first = FIRST[i % FIRST.length]!;
  // (7a + b) mod 40 is distinct for each of the ten b per a, so the 400 names are unique.
  const last = LAST[(7 * (i % FIRST.length) + Math.floor(i / FIRST.length)) % LAST.length]!;
  const year = 1938 + Math.floor(rand() * 82);
  const dob = `${year}-${String(1 + Math.floor(rand() * 12)).padStart(2, "0")}-${String(1 + Math.floor(rand() * 28)).padStart(2, "0")}`;
  const n = Math.floor(rand() * 6);
  const baseM = q((rand() + rand() + rand() - 1.5) * 3);
  const cyl = -q(rand() * rand() * 2.5);
  const axis = 1 + Math.floor(rand() * 180);
  const ageNow = ageAt(dob, ANCHOR);
  const roll = rand();
  const condition: Condition =
    ageNow < 16
      ? roll < 0.4
        ? "myopic_child"
        : roll < 0.5
          ? "amblyopia"
          : "child"
      : ageNow >= 65 && roll < 0.3
        ? "cataract"
        : ageNow >= 60 && roll < 0.38
          ? "amd"
          : ageNow >= 45 && roll >= 0.38 && roll < 0.45
            ? "glaucoma_suspect"
            : ageNow >= 50 && roll >= 0.45 && roll < 0.51
              ? "glaucoma"
              : ageNow >= 30 && roll >= 0.51 && roll < 0.59
                ? "diabetic"
                : ageNow >= 16 && roll >= 0.59 && roll < 0.62
                  ? "amblyopia"
                  : "none";
  // Myopic children: about -0.6 D a year untreated, about half that on myopia control, which some
  // start at their second visit and a few stop later (common practice; rates are illustrative).
  const control = condition === "myopic_child" && rand() < 0.5;
  const stopsControl = control && rand() < 0.3;
  const startM = condition === "myopic_child" ? -q(0.5 + rand() * 1.5) : baseM;
  const iopBase = condition === "glaucoma_suspect" ? 21 : condition === "glaucoma" ? 14 : 11;
  const iopSpread = condition === "glaucoma_suspect" ? 3 : condition === "glaucoma" ? 4 : 8;
  const method = (() => {
    const r = rand();
    return r < 0.6 ? "non_contact" : r < 0.85 ? "goldmann" : "rebound";
  })();
  const dates = examDates(rand, n);
  const firstAt = dates[0];
  const exams = dates.map((at, k) => {
    const age = ageAt(dob, at);
    const drift = q((rand() - 0.5) * 0.5);
    const years = firstAt ? (at.getTime() - firstAt.getTime()) / (365.25 * DAY) : 0;
    let s = q(baseM + drift);
    let leftS = q(s + (rand() - 0.5) * 0.5);
    if (condition === "myopic_child") {
      const rate = (y: number) => (control && k > 0 && !(stopsControl && k >= 3) ? 0.28 : 0.6) * y;
      s = q(startM - rate(years));
      leftS = q(s - 0.25);
    } else if (condition === "child") {
      // Young children are mostly low hyperopes, the hyperopia falling as they grow (common practice).
      s = q(Math.max(0.25, 2.25 - 0.15 * age));
      leftS = s;
    } else if (condition === "amblyopia") {
      s = 0.75;
      leftS = 4.5;
    } else if (condition === "cataract") {
      // Nuclear cataract: a myopic shift as it advances (common practice).
      s = q(baseM - 0.25 * k);
      leftS = q(s + 0.25);
    }
    const c = condition === "amblyopia" ? -1 : cyl;
    const add = age >= 42 ? q(Math.min(2.75, 0.75 + (age - 42) * 0.09)) : undefined;
    const bestFor = (eye: "right" | "left") => {
      const normal =
        age < 50
          ? rand() < 0.4
            ? -0.08
            : 0
          : age < 70
            ? rand() < 0.6
              ? 0
              : 0.1
            : 0.1 + 0.1 * Math.floor(rand() * 2);
      if (condition === "cataract") return acuityLine(Math.min(0.6, 0.1 + 0.1 * k + (eye === "left" ? 0.1 : 0)))[1];
      if (condition === "amd") return acuityLine(eye === "right" ? 0.2 : 0.1)[1];
      if (condition === "amblyopia" && eye === "left")
        return acuityLine(age < 16 ? Math.max(0.18, 0.4 - 0.1 * k) : 0.3)[1];
      return acuityLine(normal)[1];
    };
    const bestVa = { right: bestFor("right"), left: bestFor("left") };
    const child = age < 16;
    const iopMethod = child ? "rebound" : method;
    const read = () => iopBase + Math.floor(rand() * iopSpread);
    const iopR = read();
    const iopL = Math.max(8, iopR + Math.floor(rand() * 3) - 1);
    const readings = (v: number) => (iopMethod === "goldmann" ? [v] : [v, v + (rand() < 0.5 ? 1 : -1)]);
    const cd =
      condition === "glaucoma" ? 0.65 : condition === "glaucoma_suspect" ? 0.55 : 0.25 + 0.05 * Math.floor(rand() * 5);
    const dx: { code: string; eye: "right" | "left" | "both" }[] = [];
    let assessment = "Stable; spectacles as prescribed.";
    let plan = "Routine recall.";
    let symptoms = "";
    const fundus: NonNullable<TriageFindings["fundus"]> = {};
    switch (condition) {
      case "cataract":
        dx.push({ code: "H25.9", eye: "both" });
        assessment = "Nuclear and cortical lens opacities reducing best-corrected acuity, left more than right.";
        plan =
          k >= 2
            ? "Glare and reading difficulty affect daily life: discussed cataract surgery; referral offered."
            : "Monitor; review in 12 months or sooner if vision worsens.";
        symptoms = "Glare from headlights at night";
        break;
      case "amd":
        dx.push({ code: "H35.3", eye: "both" });
        fundus.right = {
          drusen: true,
          maculaNotes: "Soft drusen and pigment changes at the macula; no haemorrhage or fluid seen",
        };
        fundus.left = { drusen: true, maculaNotes: "Scattered small drusen at the macula" };
        assessment = "Dry (early) age-related macular changes, stable.";
        plan = "Amsler grid at home; return at once with new distortion or a sudden drop in vision. Review 12 months.";
        break;
      case "glaucoma_suspect":
        dx.push({ code: "H40.0", eye: "both" });
        assessment = "Borderline pressures with healthy-looking discs; fields full.";
        plan = "Repeat IOP by applanation and fields in 6 months.";
        break;
      case "glaucoma":
        dx.push({ code: "H40.1", eye: "both" });
        assessment = "Primary open-angle glaucoma under hospital care; pressures controlled on drops.";
        plan = "Continue drops as directed by the hospital eye service; routine recall.";
        break;
      case "diabetic": {
        // Grades as in the English diabetic eye screening programme (R0 none, R1 background; M0 no maculopathy).
        const grade = k === dates.length - 1 && rand() < 0.45 ? "R1 M0" : "R0 M0";
        fundus.right = {
          peripheryNotes:
            grade === "R0 M0" ? "No diabetic retinopathy (R0 M0)" : "A few microaneurysms and dot haemorrhages (R1 M0)",
        };
        fundus.left = { peripheryNotes: "No diabetic retinopathy (R0 M0)" };
        if (grade !== "R0 M0") dx.push({ code: "H36.0", eye: "right" });
        assessment = `Type 2 diabetes; retinopathy grade right ${grade}, left R0 M0.`;
        plan = "Continue annual diabetic eye screening; routine recall.";
        break;
      }
      case "amblyopia":
        dx.push({ code: "H53.0", eye: "left" }, { code: "H52.3", eye: "both" });
        assessment = child
          ? "Anisometropic amblyopia, left; acuity improving with full-time spectacles."
          : "Long-standing amblyopia, left; stable.";
        plan = child ? "Full-time spectacles; patching discussed with the family. Review 6 months." : "Routine recall.";
        break;
      case "myopic_child":
        assessment =
          control && !(stopsControl && k >= 3) && k > 0
            ? "Myopia progressing more slowly on myopia-control spectacle lenses."
            : stopsControl && k >= 3
              ? "Myopia control stopped at the family's wish; progression has picked up."
              : "Myopia progressing.";
        plan =
          control && k === 0
            ? "Discussed myopia control; myopia-control spectacle lenses chosen."
            : "Review in 12 months.";
        break;
    }
    const guardian = child ? `Attended with ${rand() < 0.6 ? "mother" : "father"}, who gave the history.` : "";
    return {
      at,
      right: { sphere: s, cylinder: c, axis: c ? axis : 180 },
      left: {
        sphere: leftS,
        cylinder: q(c * (0.8 + rand() * 0.4)) || 0,
        axis: c ? 1 + ((axis + 178) % 180) : 180,
      },
      add: child ? undefined : add,
      reason: child
        ? k === 0
          ? "School eye check suggested a test"
          : "Children's review"
        : age >= 42
          ? "Routine exam; near vision harder"
          : "Routine exam",
      symptoms: [symptoms, guardian].filter(Boolean).join(" "),
      diagnoses: [
        s < -0.25 ? "H52.1" : s > 0.25 ? "H52.0" : "",
        c <= -0.75 ? "H52.2" : "",
        add && !child ? "H52.4" : "",
      ].filter(Boolean),
      general: true,
      cycloplegic: child && (k === 0 || age < 7 || condition === "amblyopia"),
      findings: {
        bestVa,
        iop: {
          right: { readings: readings(iopR), method: iopMethod },
          left: { readings: readings(iopL), method: iopMethod },
        },
        disc: {
          right: {
            verticalCd: cd,
            margins: "distinct" as const,
            notes: condition === "glaucoma" ? "Inferior rim thinning" : "",
          },
          left: { verticalCd: Math.round((cd + (rand() < 0.3 ? 0.05 : 0)) * 100) / 100, margins: "distinct" as const },
        },
        pupils: { right: { equalReactive: true }, left: { equalReactive: true } },
        ...(Object.keys(fundus).length ? { fundus } : {}),
        ...(condition === "glaucoma" || condition === "glaucoma_suspect" ? { cct: { right: 545, left: 550 } } : {}),
        ...(child && (k === 0 || age < 7) ? { dilated: true } : {}),
        diagnoses: dx,
        assessment,
        plan,
      } satisfies TriageFindings,
    };
  });
  return {
    first,
    last,
    dob,
    sex: rand() < 0.5 ? "female" : "male",
    exams,
    contactLens: n > 0 && ageNow >= 14 && condition !== "cataract" && rand() < 0.1,
    medications: MEDICATIONS[condition],
  };
}

/** The named cases of the demo. */
function namedCases(): Case[] {
  const yearsBack = (k: number, h = 10) => new Date(ANCHOR.getTime() - k * 365 * DAY - h * 3600e3);
  const myope = (
    first: string,
    last: string,
    dob: string,
    start: number,
    rate: number,
    sex: "female" | "male",
  ): Case => ({
    first,
    last,
    dob,
    sex,
    exams: [4, 3, 2, 1, 0].map((k, i) => ({
      at: yearsBack(k, 9),
      right: { sphere: q(start + rate * i), cylinder: -0.25, axis: 180 },
      left: { sphere: q(start + rate * i - 0.25), cylinder: -0.5, axis: 5 },
      iop: [14, 15] as [number, number],
      reason: i === 0 ? "School noticed difficulty reading the board" : "Myopia review",
      diagnoses: ["H52.1"],
      // The first visit refracted under cyclopentolate, as for any child's first test.
      cycloplegic: i === 0,
    })),
  });
  return [
    myope("Tamsin", "Okafor-Lindqvist", "2014-03-11", -0.75, -0.75, "female"),
    myope("Elio", "Fairbairn", "2016-08-29", -0.5, -0.5, "male"),
    myope("Pippa", "Vandersloot", "2012-01-17", -1.25, -0.5, "female"),
    {
      first: "Benedikt",
      last: "Sorrell-Amadi",
      dob: "1991-06-02",
      sex: "male",
      exams: [2, 1, 0].map((k) => ({
        at: yearsBack(k),
        right: { sphere: 0.5, cylinder: 0, axis: 180 },
        left: { sphere: -3.5, cylinder: -0.75, axis: 170 },
        iop: [15, 16] as [number, number],
        reason: "Headaches with reading",
        diagnoses: ["H52.3", "H52.1"],
      })),
    },
    {
      first: "Corentin",
      last: "Maddox-Ferreira",
      dob: "1999-10-14",
      sex: "male",
      exams: [1, 0].map((k) => ({
        at: yearsBack(k),
        right: { sphere: -1, cylinder: 0, axis: 180 },
        left: { sphere: -1.25, cylinder: 0, axis: 180 },
        iop: [13, 13] as [number, number],
        colour: "red_green" as const,
        plates: 6,
        reason: "Employment medical: colour vision check",
        diagnoses: ["H52.1", "H53.5"],
      })),
    },
    {
      first: "Wilhelmina",
      last: "Strand-Achebe",
      dob: "1958-12-05",
      sex: "female",
      medications: "Amlodipine 5 mg daily",
      exams: [
        {
          at: yearsBack(1),
          right: { sphere: 1.5, cylinder: -0.5, axis: 90 },
          left: { sphere: 1.25, cylinder: -0.5, axis: 85 },
          add: 2.25,
          iop: [19, 17] as [number, number],
          blindSpot: { w: 5.5, h: 7.5 },
          reason: "Routine exam",
          diagnoses: ["H52.0", "H52.4"],
        },
        {
          at: yearsBack(0, 7),
          right: { sphere: 1.5, cylinder: -0.5, axis: 90 },
          left: { sphere: 1.25, cylinder: -0.5, axis: 85 },
          add: 2.5,
          iop: [26, 19] as [number, number],
          blindSpot: { w: 10, h: 12 },
          fieldDefect: "Enlarged blind spot, right eye",
          reason: "Routine exam; occasional morning headaches",
          diagnoses: ["H52.0", "H52.4", "H40.0"],
        },
      ],
    },
    {
      first: "Ines",
      last: "Halloran-Mbeki",
      dob: "1987-04-21",
      sex: "female",
      contactLens: true,
      exams: [2, 1, 0].map((k) => ({
        at: yearsBack(k),
        right: { sphere: -5.5, cylinder: -0.75, axis: 180 },
        left: { sphere: -6, cylinder: -0.5, axis: 175 },
        iop: [15, 15] as [number, number],
        reason: "Contact-lens aftercare",
        diagnoses: ["H52.1", "H52.2"],
      })),
    },
    {
      first: "Jago",
      last: "Pemberton-Osei",
      dob: "1995-09-09",
      sex: "male",
      contactLens: true,
      allergies: "Thiomersal (preservative in some solutions)",
      exams: [1, 0].map((k) => ({
        at: yearsBack(k),
        right: { sphere: -3, cylinder: 0, axis: 180 },
        left: { sphere: -3.25, cylinder: 0, axis: 180 },
        iop: [12, 13] as [number, number],
        reason: "Contact-lens aftercare",
        diagnoses: ["H52.1"],
      })),
    },
  ];
}

/** One patient per triage rule: a routine exam a year ago and the exam with the finding. */
function triageCases(): Case[] {
  return TRIAGE_CASES.map((t) => {
    const at = new Date(ANCHOR.getTime() - t.daysAgo * DAY - 6 * 3600e3);
    const rx = { right: { sphere: 0.75, cylinder: -0.5, axis: 90 }, left: { sphere: 0.5, cylinder: -0.25, axis: 85 } };
    const age = ageAt(t.dob, at);
    const add = age >= 45 ? q(Math.min(2.5, 0.75 + (age - 45) * 0.08)) : undefined;
    return {
      first: t.first,
      last: t.last,
      dob: t.dob,
      sex: t.sex,
      medications: t.medications,
      allergies: t.allergies,
      exams: [
        {
          at: new Date(at.getTime() - 365 * DAY),
          ...rx,
          add,
          iop: [15, 15] as [number, number],
          reason: "Routine exam",
          diagnoses: [],
          findings: {
            pupils: { right: { equalReactive: true }, left: { equalReactive: true } },
            bestVa: t.previousBestVa ?? { right: 0, left: 0 },
          },
        },
        {
          at,
          ...rx,
          add,
          iop: [16, 16] as [number, number],
          reason: t.reason,
          symptoms: t.symptoms,
          diagnoses: [],
          findings: t.findings,
          ...(t.blindSpot ? { blindSpot: t.blindSpot, fieldDefect: "Enlarged blind spot, right eye" } : {}),
        },
      ],
    };
  });
}

/** Rosalind Achterberg (the demo portal patient): two past exams and a current spectacle prescription. */
function demoPatientExams(): Case["exams"] {
  return [
    {
      at: new Date("2024-11-12T10:30:00Z"),
      right: { sphere: -1.75, cylinder: -0.5, axis: 175 },
      left: { sphere: -1.5, cylinder: -0.25, axis: 10 },
      add: 1,
      iop: [15, 16],
      reason: "Routine exam",
      diagnoses: ["H52.1", "H52.4"],
    },
    {
      at: new Date("2025-11-18T09:15:00Z"),
      right: { sphere: -2, cylinder: -0.5, axis: 175 },
      left: { sphere: -1.75, cylinder: -0.25, axis: 10 },
      add: 1.25,
      iop: [16, 16],
      reason: "Routine exam; near vision harder in the evening",
      diagnoses: ["H52.1", "H52.4"],
    },
  ];
}

/** Appointment start times (minutes after midnight) of a caseload visit: 09:00–12:30 and 14:00–17:00, clear of lunch. */
const VISIT_STARTS = [
  ...Array.from({ length: 8 }, (_, i) => 540 + 30 * i),
  ...Array.from({ length: 7 }, (_, i) => 840 + 30 * i),
];

/**
 * Moves each visit to a free start time on a working day (Monday to Friday, not a bank holiday),
 * the same day or the next working one; the exam is timed two minutes after the start.
 */
function diaryPlacer(timeZone: string) {
  const used = new Set<string>();
  return (at: Date) => {
    let day = localParts(at, timeZone).date;
    const k = Math.floor(at.getTime() / 3600e3) % VISIT_STARTS.length;
    for (;;) {
      while (weekdayOf(day) > 5 || isBankHoliday(day)) day = addDays(day, 1);
      for (let t = 0; t < VISIT_STARTS.length; t++) {
        const minute = VISIT_STARTS[(k + t) % VISIT_STARTS.length]!;
        const start = wallTimeToInstant(day, minute, timeZone);
        if (!start || used.has(`${day}|${minute}`)) continue;
        used.add(`${day}|${minute}`);
        return new Date(start.getTime() + 2 * 60e3);
      }
      day = addDays(day, 1);
    }
  };
}

/** The practice's clock time ("HH:MM") `minutes` after an instant. */
function clockTime(at: Date, minutes: number) {
  const m = localParts(new Date(at.getTime() + minutes * 60e3), DEMO_PRACTICE.timeZone).minute;
  return `${String(Math.floor(m / 60)).padStart(2, "0")}:${String(m % 60).padStart(2, "0")}`;
}

function chunks<T>(list: T[], size: number) {
  const out: T[][] = [];
  for (let i = 0; i < list.length; i += size) out.push(list.slice(i, i + size));
  return out;
}

const LABELS: Record<string, string> = {
  "H52.0": "Hypermetropia",
  "H52.1": "Myopia",
  "H52.2": "Astigmatism",
  "H52.3": "Anisometropia and aniseikonia",
  "H52.4": "Presbyopia",
  "H53.5": "Colour vision deficiencies",
  "H40.0": "Glaucoma suspect",
};

async function writeExams(
  tx: Tx,
  patientId: string,
  list: Case["exams"],
  optometristIds: string[],
  rand: () => number,
) {
  if (!list.length) return [];
  const rows = await tx
    .insert(exams)
    .values(
      list.map((e) => {
        // Only the examining clinician signs.
        const examiner = optometristIds[Math.floor(rand() * optometristIds.length)]!;
        return {
          patientId,
          optometristId: examiner,
          examinedAt: e.at,
          status: "signed" as const,
          signedAt: new Date(e.at.getTime() + 25 * 60e3),
          signedById: examiner,
          createdAt: e.at,
          updatedAt: e.at,
        };
      }),
    )
    .returning({ id: exams.id, signedById: exams.signedById, optometristId: exams.optometristId });
  return rows.map((r, i) => ({ ...r, input: list[i]! }));
}

/** Adds the caseload unless it is already there (idempotent). */
export async function seedCaseload(tx: Tx) {
  const [already] = await tx
    .select({ n: sql<number>`count(*)::int` })
    .from(patients)
    .where(like(patients.email, `%@${CASELOAD_DOMAIN}`));
  const clinicians = await tx
    .select({ id: users.id, name: users.name, licence: users.licenceNumber, email: users.email })
    .from(users)
    .where(inArray(users.role, ["optometrist", "owner"]));
  if (!clinicians.length) return;
  const optometrist = clinicians.find((c) => c.email.startsWith("optometrist@")) ?? clinicians[0]!;
  const ids = [optometrist.id, ...clinicians.filter((c) => c.id !== optometrist.id).map((c) => c.id)];
  const rand = prng(20261120);

  const cases: Case[] = [
    ...namedCases(),
    ...Array.from({ length: 400 }, (_, i) => generalCase(rand, i)),
    ...triageCases(),
  ];
  const allExams: {
    id: string;
    patientId: string;
    input: Case["exams"][number];
    last: boolean;
    contactLens: boolean;
    dob: string;
  }[] = [];
  // Every visit at a free appointment time of a working day, inside the practice's hours.
  const place = diaryPlacer(DEMO_PRACTICE.timeZone);
  for (const c of cases) for (const e of c.exams) e.at = place(e.at);

  if ((already?.n ?? 0) === 0) {
    const inserted: { id: string }[] = [];
    for (const part of chunks(cases, 200)) {
      inserted.push(
        ...(await tx
          .insert(patients)
          .values(
            part.map((c, i) => ({
              firstName: c.first,
              lastName: c.last,
              dateOfBirth: c.dob,
              sex: c.sex,
              email: `${c.first}.${c.last}.${inserted.length + i}@${CASELOAD_DOMAIN}`.toLowerCase(),
              phone: `07700 9${String(100000 + (((inserted.length + i) * 7919) % 900000)).slice(0, 5)}`,
              addressLine1: `${1 + ((inserted.length + i) % 97)} ${LAST[(inserted.length + i) % LAST.length]} Road`,
              city: "Brackenford",
              postcode: `BF${1 + ((inserted.length + i) % 9)} ${1 + ((inserted.length + i) % 8)}QT`,
              allergies: c.allergies ?? "",
              // Most patients were asked and have no known allergies; a few were not asked (left unrecorded).
              noKnownAllergies: !c.allergies && (inserted.length + i) % 5 !== 4,
              medications: c.medications ?? "",
              ...DEMO_GPS[(inserted.length + i) % DEMO_GPS.length]!,
              lastExamAt: c.exams.at(-1)?.at ?? null,
            })),
          )
          .returning({ id: patients.id })),
      );
    }
    for (const [i, c] of cases.entries()) {
      const written = await writeExams(tx, inserted[i]!.id, c.exams, ids, rand);
      written.forEach((w, k) =>
        allExams.push({
          id: w.id,
          patientId: inserted[i]!.id,
          input: w.input,
          last: k === written.length - 1,
          contactLens: !!c.contactLens,
          dob: c.dob,
        }),
      );
    }
  }

  // The demo portal patient, on its own check so it is added to a database seeded before.
  const [demo] = await tx
    .select({ id: patients.id })
    .from(patients)
    .where(
      and(
        eq(patients.firstName, DEMO_PATIENT.firstName),
        eq(patients.lastName, DEMO_PATIENT.lastName),
        eq(patients.dateOfBirth, DEMO_PATIENT.dateOfBirth),
      ),
    );
  if (demo) {
    const [has] = await tx
      .select({ n: sql<number>`count(*)::int` })
      .from(exams)
      .where(eq(exams.patientId, demo.id));
    if ((has?.n ?? 0) === 0) {
      const list = demoPatientExams();
      for (const e of list) e.at = place(e.at);
      const written = await writeExams(tx, demo.id, list, [optometrist.id], rand);
      written.forEach((w, k) =>
        allExams.push({
          id: w.id,
          patientId: demo.id,
          input: w.input,
          last: k === written.length - 1,
          contactLens: false,
          dob: DEMO_PATIENT.dateOfBirth,
        }),
      );
      await tx
        .update(patients)
        .set({ lastExamAt: list.at(-1)!.at })
        .where(eq(patients.id, demo.id));
    }
  }
  if (!allExams.length) return;

  const refractions: (typeof examRefractions.$inferInsert)[] = [];
  const acuity: (typeof examAcuity.$inferInsert)[] = [];
  const iop: (typeof examIop.$inferInsert)[] = [];
  const colour: (typeof examColourVision.$inferInsert)[] = [];
  const fields: (typeof examVisualFields.$inferInsert)[] = [];
  const history: (typeof examHistory.$inferInsert)[] = [];
  const assessment: (typeof examAssessment.$inferInsert)[] = [];
  const diagnoses: (typeof examDiagnoses.$inferInsert)[] = [];
  const redFlags: (typeof examRedFlags.$inferInsert)[] = [];
  const pupils: (typeof examPupils.$inferInsert)[] = [];
  const chambers: (typeof examAnteriorChamber.$inferInsert)[] = [];
  const discs: (typeof examDiscs.$inferInsert)[] = [];
  const fundus: (typeof examFundus.$inferInsert)[] = [];
  const dilations: (typeof examDilations.$inferInsert)[] = [];
  const ccts: (typeof examCornealThickness.$inferInsert)[] = [];
  const fmt = (r: SphCyl) =>
    r.cylinder
      ? `${r.sphere > 0 ? "+" : ""}${r.sphere.toFixed(2)} ${r.cylinder.toFixed(2)} x ${r.axis}`
      : r.sphere === 0
        ? "pl"
        : `${r.sphere > 0 ? "+" : ""}${r.sphere.toFixed(2)} DS`;
  for (const e of allExams) {
    const x = e.input;
    for (const eye of ["right", "left"] as const) {
      const rx = x[eye];
      const auto = {
        sphere: q(rx.sphere - 0.25 * Math.round(rand())),
        cylinder: q(rx.cylinder - 0.25 * Math.round(rand())),
        axis: rx.cylinder ? rx.axis : 180,
      };
      refractions.push({
        examId: e.id,
        kind: "autorefraction",
        eye,
        rawText: fmt(auto),
        ...auto,
        cylinder: auto.cylinder || 0,
        axis: auto.cylinder ? auto.axis : 180,
      });
      const best = x.findings?.bestVa?.[eye] ?? 0;
      const bestText = VA_TEXT[String(best)] ?? acuityLine(best)[0];
      const age = ageAt(e.dob, x.at);
      // Under 7 the refraction rests on cycloplegic retinoscopy alone; older children also answer a subjective.
      if (x.cycloplegic) {
        // Cyclopentolate relaxes accommodation, so more plus is found (common practice).
        const cyclo = { ...rx, sphere: q(rx.sphere + (rx.sphere > 0 ? 0.75 : 0.25)) };
        refractions.push({ examId: e.id, kind: "cycloplegic", eye, rawText: fmt(cyclo), ...cyclo, vertexMm: 12 });
      }
      const kinds = x.cycloplegic && age < 7 ? (["final"] as const) : (["subjective", "final"] as const);
      for (const kind of kinds)
        refractions.push({
          examId: e.id,
          kind,
          eye,
          rawText: fmt(rx),
          ...rx,
          addPower: x.add ?? null,
          vertexMm: 12,
          vaNotation: bestText,
          vaLogMar: best,
        });
      const unaided = x.general ? unaidedLogMar(rx, age, best) : rx.sphere < -1 ? 0.78 : 0.18;
      acuity.push({
        examId: e.id,
        eye,
        distance: "distance",
        correction: "unaided",
        notation: acuityLine(unaided)[0],
        scale: "metric",
        logMar: unaided,
      });
      acuity.push({
        examId: e.id,
        eye,
        distance: "distance",
        correction: "best",
        notation: bestText,
        scale: "metric",
        logMar: best,
      });
      const f = x.findings;
      const readings = f?.iop?.[eye];
      if (readings)
        readings.readings.forEach((mmHg, k) =>
          iop.push({
            examId: e.id,
            eye,
            reading: k + 1,
            mmHg,
            method: readings.method,
            measuredTime: clockTime(x.at, 6 + 2 * k),
          }),
        );
      else if (x.iop)
        iop.push({
          examId: e.id,
          eye,
          mmHg: x.iop[eye === "right" ? 0 : 1],
          method: "non_contact",
          measuredTime: clockTime(x.at, 6),
        });
      if (f?.cct?.[eye]) ccts.push({ examId: e.id, eye, micrometres: f.cct[eye]! });
      const p = f?.pupils?.[eye];
      if (p) pupils.push({ examId: e.id, eye, equalReactive: !!p.equalReactive, rapd: !!p.rapd, larger: !!p.larger });
      const a = f?.ac?.[eye];
      if (a)
        chambers.push({
          examId: e.id,
          eye,
          vanHerick: a.vanHerick ?? null,
          cells: a.cells ?? null,
          hyphaema: !!a.hyphaema,
          hypopyon: !!a.hypopyon,
          notes: a.notes ?? "",
        });
      const d = f?.disc?.[eye];
      if (d)
        discs.push({
          examId: e.id,
          eye,
          verticalCd: d.verticalCd ?? null,
          margins: d.margins ?? null,
          swelling: !!d.swelling,
          haemorrhage: !!d.haemorrhage,
          notes: d.notes ?? "",
        });
      const fu = f?.fundus?.[eye];
      if (fu && Object.keys(fu).length)
        fundus.push({
          examId: e.id,
          eye,
          vitreousDetachment: !!fu.vitreousDetachment,
          vitreousPigment: !!fu.vitreousPigment,
          retinalBreak: !!fu.retinalBreak,
          retinalDetachment: !!fu.retinalDetachment,
          drusen: !!fu.drusen,
          suspectedWetAmd: !!fu.suspectedWetAmd,
          maculaNotes: fu.maculaNotes ?? "",
          peripheryNotes: fu.peripheryNotes ?? "",
        });
      if (!f?.disc && !x.findings) {
        // Ordinary exams: a healthy disc, deterministic from the exam's position (no draw from the shared sequence).
        const h = (allExams.indexOf(e) * 2654435761) >>> 0;
        const cd = 0.2 + (h % 7) * 0.05;
        discs.push({
          examId: e.id,
          eye,
          verticalCd: Math.round((eye === "left" && h % 3 === 0 ? cd + 0.05 : cd) * 100) / 100,
          margins: "distinct",
        });
        pupils.push({ examId: e.id, eye, equalReactive: true });
      }
      if (x.colour)
        colour.push({
          examId: e.id,
          eye,
          test: "plates_38",
          platesShown: 15,
          platesCorrect: x.colour === "normal" ? 15 : (x.plates ?? 6),
          result: x.colour,
          notes: x.colour === "red_green" ? "Consistent with congenital red-green deficiency; both eyes alike" : "",
        });
      if (x.blindSpot) {
        const enlarged = eye === "right" ? x.blindSpot : { w: 5.5, h: 7.5 };
        fields.push({
          examId: e.id,
          eye,
          method: "automated",
          blindSpotXDeg: 15,
          blindSpotYDeg: -1.5,
          blindSpotWidthDeg: enlarged.w,
          blindSpotHeightDeg: enlarged.h,
          defectPresent: !!x.fieldDefect && eye === "right",
          defects: eye === "right" ? (x.fieldDefect ?? "") : "",
          reliability: "good",
        });
      }
    }
    history.push({
      examId: e.id,
      reason: x.reason,
      symptoms: x.symptoms ?? "",
      ocularHistory: "",
      generalHistory: "",
      medications: "",
      familyHistory: "",
    });
    const f = x.findings;
    if (f?.redFlags) {
      const r = f.redFlags;
      redFlags.push({
        examId: e.id,
        flashes: r.flashes ?? null,
        newFloaters: r.newFloaters ?? null,
        curtain: r.curtain ?? null,
        suddenLoss: r.suddenLoss ?? null,
        severePain: r.severePain ?? null,
        redEye: r.redEye ?? null,
        distortion: r.distortion ?? null,
        newDiplopia: !!r.newDiplopia,
        gcaSymptoms: !!r.gcaSymptoms,
        headache: !!r.headache,
        notes: r.notes ?? "",
      });
    } else redFlags.push({ examId: e.id });
    if (f?.dilated)
      dilations.push({
        examId: e.id,
        drug: x.cycloplegic ? "cyclopentolate" : "tropicamide",
        strengthPercent: x.cycloplegic && ageAt(e.dob, x.at) < 1 ? 0.5 : 1,
        eye: "both",
        instilledAt: new Date(x.at.getTime() + 10 * 60e3),
      });
    assessment.push({
      examId: e.id,
      assessment:
        f?.assessment ??
        (x.fieldDefect
          ? "Raised IOP right with an enlarged blind spot: consider referral."
          : f?.diagnoses
            ? "See findings."
            : "Stable; spectacles as prescribed."),
      plan: f?.plan ?? (x.fieldDefect ? "Repeat IOP and fields; referral letter to be considered." : "Routine recall."),
      recallMonths: x.fieldDefect ? 3 : /6 months/.test(f?.plan ?? "") ? 6 : ageAt(e.dob, x.at) < 16 ? 12 : 24,
    });
    for (const code of x.diagnoses)
      diagnoses.push({
        examId: e.id,
        code,
        label: LABELS[code] ?? DIAGNOSES.find((d) => d.code === code)!.label,
        eye: "both",
      });
    for (const d of f?.diagnoses ?? [])
      if (!x.diagnoses.includes(d.code))
        diagnoses.push({
          examId: e.id,
          code: d.code,
          label: DIAGNOSES.find((k) => k.code === d.code)!.label,
          eye: d.eye,
        });
  }
  for (const part of chunks(refractions, 1000)) await tx.insert(examRefractions).values(part);
  for (const part of chunks(acuity, 1000)) await tx.insert(examAcuity).values(part);
  for (const part of chunks(iop, 1000)) await tx.insert(examIop).values(part);
  if (colour.length) await tx.insert(examColourVision).values(colour);
  if (fields.length) await tx.insert(examVisualFields).values(fields);
  for (const part of chunks(history, 1000)) await tx.insert(examHistory).values(part);
  for (const part of chunks(assessment, 1000)) await tx.insert(examAssessment).values(part);
  for (const part of chunks(diagnoses, 1000)) await tx.insert(examDiagnoses).values(part);
  for (const part of chunks(redFlags, 1000)) await tx.insert(examRedFlags).values(part);
  for (const part of chunks(pupils, 1000)) await tx.insert(examPupils).values(part);
  for (const part of chunks(discs, 1000)) await tx.insert(examDiscs).values(part);
  if (chambers.length) await tx.insert(examAnteriorChamber).values(chambers);
  if (fundus.length) await tx.insert(examFundus).values(fundus);
  if (dilations.length) await tx.insert(examDilations).values(dilations);
  if (ccts.length) await tx.insert(examCornealThickness).values(ccts);

  // Prescriptions from each patient's latest exam (most patients), contact lenses for the wearers,
  // spread over the catalogue's lenses in powers each lens is made in.
  const catalogue = await tx.select().from(schema.contactLenses);
  let wearer = 0;
  for (const e of allExams.filter((x) => x.last)) {
    if (!e.contactLens && rand() < 0.15) continue;
    const issuedAt = new Date(e.input.at.getTime() + 50 * 60e3);
    const presbyope = (e.input.add ?? 0) > 0;
    const family = wearer++;
    const fits = e.contactLens
      ? (["right", "left"] as const).map((eye) => fitDemoLens(catalogue, e.input[eye], presbyope, family, family))
      : [];
    const kinds: ("spectacle" | "contact_lens")[] =
      fits.length && fits.every(Boolean) ? ["spectacle", "contact_lens"] : ["spectacle"];
    for (const kind of kinds) {
      const months = kind === "spectacle" ? 24 : 12;
      const expires = new Date(issuedAt);
      expires.setUTCMonth(expires.getUTCMonth() + months);
      const lensNames = [...new Set(fits.map((f) => `${f!.lens.manufacturer} ${f!.lens.name}`))];
      const [rx] = await tx
        .insert(prescriptions)
        .values({
          patientId: e.patientId,
          examId: e.id,
          kind,
          issuedById: optometrist.id,
          issuedAt,
          expiresOn: isoDate(expires),
          prescriberName: optometrist.name,
          prescriberLicence: optometrist.licence ?? "",
          lensName: kind === "contact_lens" ? lensNames.join(" / ") : null,
        })
        .returning({ id: prescriptions.id });
      for (const [i, eye] of (["right", "left"] as const).entries()) {
        const s = e.input[eye];
        if (kind === "spectacle")
          await tx
            .insert(prescriptionEyes)
            .values({ prescriptionId: rx!.id, eye, ...s, addPower: e.input.add ?? null, vertexMm: 12 });
        else {
          const fit = fits[i]!;
          await tx.insert(prescriptionEyes).values({
            prescriptionId: rx!.id,
            eye,
            ...fit.power,
            addPower: presbyope ? (e.input.add ?? null) : null,
            vertexMm: 0,
            exactSphere: fit.exact.sphere,
            exactCylinder: fit.exact.cylinder,
            exactAxis: fit.exact.axis,
            spectacleSphere: s.sphere,
            spectacleCylinder: s.cylinder,
            spectacleAxis: s.axis,
            baseCurveMm: fit.baseCurveMm,
            diameterMm: fit.diameterMm,
            contactLensId: fit.lens.id,
            lensManufacturer: fit.lens.manufacturer,
            lensName: fit.lens.name,
            lensMaterial: fit.lens.material,
            lensReplacement: fit.lens.replacement,
          });
        }
      }
    }
  }
}

/**
 * Gives each signed caseload exam that has none its appointment: a completed visit of the type
 * its age and reason call for, starting two minutes before the exam, at the site where the
 * examiner worked that weekday. Runs after the diary's types and hours exist. A visit that would
 * overlap another of the same clinician is left out (the exclusion constraint decides).
 */
export async function linkCaseloadVisits(tx: Tx) {
  await tx.execute(sql`
    with src as (
      select e.id as exam_id, e.patient_id, e.optometrist_id, e.examined_at - interval '2 minutes' as starts_at,
        case
          when age(e.examined_at, p.date_of_birth::timestamptz) < interval '16 years' then 'Child eye exam'
          when h.reason like 'Contact-lens%' then 'Contact lens check'
          else 'Comprehensive eye exam'
        end as type_name,
        wh.site_id, wh.room_id
      from exams e
      join patients p on p.id = e.patient_id
      left join exam_history h on h.exam_id = e.id
      left join working_hours wh on wh.provider_id = e.optometrist_id
        and wh.weekday = extract(isodow from e.examined_at at time zone ${DEMO_PRACTICE.timeZone})
      where e.appointment_id is null and e.status = 'signed' and e.created_at = e.examined_at
        and (p.email like ${"%@" + CASELOAD_DOMAIN} or p.email = ${DEMO_PATIENT.email})
    ), made as (
      insert into appointments (patient_id, provider_id, appointment_type_id, site_id, room_id, starts_at, ends_at,
        status, created_at, updated_at, status_changed_at)
      select s.patient_id, s.optometrist_id, t.id, coalesce(s.site_id, default_site_id()), s.room_id, s.starts_at,
        s.starts_at + make_interval(mins => t.duration_minutes), 'completed', s.starts_at - interval '21 days',
        s.starts_at + make_interval(mins => t.duration_minutes), s.starts_at + make_interval(mins => t.duration_minutes)
      from src s join appointment_types t on t.name = s.type_name
      on conflict do nothing
      returning id, patient_id, starts_at, ends_at, created_at
    ), trail as (
      insert into appointment_status_changes (appointment_id, to_status, changed_at)
      select id, 'booked'::appointment_status, created_at from made
      union all
      select id, 'completed'::appointment_status, ends_at from made
    )
    update exams e set appointment_id = made.id
    from src join made on made.patient_id = src.patient_id and made.starts_at = src.starts_at
    where e.id = src.exam_id`);
}

const GUARDIAN_ROLES = ["Mother", "Father", "Grandmother", "Legal guardian"] as const;

/**
 * Gives each caseload child under 16 a parent or guardian (invented name, the family's surname,
 * a drama-range phone number and a `.test` address). Only children who have none yet.
 */
export async function seedGuardians(tx: Tx) {
  const children = await tx
    .select({ id: patients.id, lastName: patients.lastName, phone: patients.phone })
    .from(patients)
    .where(
      and(
        like(patients.email, `%@${CASELOAD_DOMAIN}`),
        eq(patients.guardianName, ""),
        sql`${patients.dateOfBirth} > (current_date - interval '16 years')::date`,
      ),
    )
    .orderBy(patients.lastName, patients.firstName);
  for (const [i, c] of children.entries()) {
    const first = FIRST_NAMES[(i * 7 + 3) % FIRST_NAMES.length]!;
    const role = GUARDIAN_ROLES[i % GUARDIAN_ROLES.length]!;
    const surname = role === "Legal guardian" ? FIRST_NAMES[(i * 11 + 5) % FIRST_NAMES.length]! + "son" : c.lastName;
    await tx
      .update(patients)
      .set({
        guardianName: `${first} ${surname}`,
        guardianRelationship: role,
        guardianPhone: c.phone ?? `07700 900${String(100 + i).slice(-3)}`,
        guardianEmail: `${first}.${surname}`.toLowerCase().replace(/[^a-z.]/g, "") + `@${CASELOAD_DOMAIN}`,
      })
      .where(eq(patients.id, c.id));
  }
}
