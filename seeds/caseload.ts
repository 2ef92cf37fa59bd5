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
import { roundRx, vertexConvert, type SphCyl } from "../app/lib/optics";
import { DIAGNOSES } from "../app/lib/exam/sections";
import { DEMO_PATIENT } from "./demo-practice";
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
  const exams = examDates(rand, n).map((at) => {
    const age = ageAt(dob, at);
    const drift = q((rand() - 0.5) * 0.5);
    const s = q(baseM + drift);
    const add = age >= 45 ? q(Math.min(2.5, 0.75 + (age - 45) * 0.08)) : undefined;
    return {
      at,
      right: { sphere: s, cylinder: cyl, axis: cyl ? axis : 180 },
      left: {
        sphere: q(s + (rand() - 0.5) * 0.5),
        cylinder: q(cyl * (0.8 + rand() * 0.4)) || 0,
        axis: cyl ? 1 + ((axis + 178) % 180) : 180,
      },
      add,
      iop: [12 + Math.floor(rand() * 8), 12 + Math.floor(rand() * 8)] as [number, number],
      reason: age >= 45 ? "Routine exam; near vision harder" : "Routine exam",
      diagnoses: [
        s < -0.25 ? "H52.1" : s > 0.25 ? "H52.0" : "",
        cyl <= -0.75 ? "H52.2" : "",
        add ? "H52.4" : "",
      ].filter(Boolean),
    };
  });
  return { first, last, dob, sex: rand() < 0.5 ? "female" : "male", exams, contactLens: n > 0 && rand() < 0.08 };
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
          signedAt: new Date(e.at.getTime() + 40 * 60e3),
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
  }[] = [];

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
      const written = await writeExams(tx, demo.id, list, [optometrist.id], rand);
      written.forEach((w, k) =>
        allExams.push({
          id: w.id,
          patientId: demo.id,
          input: w.input,
          last: k === written.length - 1,
          contactLens: false,
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
      for (const kind of ["subjective", "final"] as const)
        refractions.push({
          examId: e.id,
          kind,
          eye,
          rawText: fmt(rx),
          ...rx,
          addPower: x.add ?? null,
          vertexMm: 12,
          vaNotation: "6/6",
          vaLogMar: 0,
        });
      acuity.push({
        examId: e.id,
        eye,
        distance: "distance",
        correction: "unaided",
        notation: rx.sphere < -1 ? "6/36" : "6/9",
        logMar: rx.sphere < -1 ? 0.778 : 0.176,
      });
      const best = x.findings?.bestVa?.[eye] ?? 0;
      acuity.push({
        examId: e.id,
        eye,
        distance: "distance",
        correction: "best",
        notation: VA_TEXT[String(best)] ?? "6/6",
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
            measuredTime: `10:${String(15 + 3 * k).padStart(2, "0")}`,
          }),
        );
      else if (x.iop)
        iop.push({
          examId: e.id,
          eye,
          mmHg: x.iop[eye === "right" ? 0 : 1],
          method: "non_contact",
          measuredTime: "10:15",
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
        drug: "tropicamide",
        strengthPercent: 1,
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
      recallMonths: x.fieldDefect ? 3 : 24,
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

  // Prescriptions from each patient's latest exam (most patients), contact lenses for the wearers.
  for (const e of allExams.filter((x) => x.last)) {
    if (!e.contactLens && rand() < 0.15) continue;
    const issuedAt = new Date(e.input.at.getTime() + 50 * 60e3);
    const kinds: ("spectacle" | "contact_lens")[] = e.contactLens ? ["spectacle", "contact_lens"] : ["spectacle"];
    for (const kind of kinds) {
      const months = kind === "spectacle" ? 24 : 12;
      const expires = new Date(issuedAt);
      expires.setUTCMonth(expires.getUTCMonth() + months);
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
          lensName: kind === "contact_lens" ? "Monthly silicone hydrogel, toric where needed" : null,
        })
        .returning({ id: prescriptions.id });
      for (const eye of ["right", "left"] as const) {
        const s = e.input[eye];
        if (kind === "spectacle")
          await tx
            .insert(prescriptionEyes)
            .values({ prescriptionId: rx!.id, eye, ...s, addPower: e.input.add ?? null, vertexMm: 12 });
        else {
          const exact = vertexConvert(s, 12, 0);
          const rounded = roundRx(exact, 0.25);
          await tx.insert(prescriptionEyes).values({
            prescriptionId: rx!.id,
            eye,
            ...rounded,
            vertexMm: 0,
            exactSphere: exact.sphere,
            exactCylinder: exact.cylinder,
            exactAxis: exact.axis,
            spectacleSphere: s.sphere,
            spectacleCylinder: s.cylinder,
            spectacleAxis: s.axis,
            baseCurveMm: 8.6,
            diameterMm: 14.2,
          });
        }
      }
    }
  }
}
