import { sql } from "drizzle-orm";
import {
  type AnyPgColumn,
  boolean,
  check,
  doublePrecision,
  index,
  integer,
  jsonb,
  pgEnum,
  pgTable,
  primaryKey,
  text,
  time,
  timestamp,
  uniqueIndex,
  uuid,
} from "drizzle-orm/pg-core";
import { users } from "./auth";
import { patients } from "./patients";
import { appointments } from "./schedule";

export const examStatusEnum = pgEnum("exam_status", ["in_progress", "signed"]);

/** One eye examination (one visit). Its sections live in their own tables keyed by exam. */
export const exams = pgTable(
  "exams",
  {
    id: uuid().primaryKey().defaultRandom(),
    patientId: uuid()
      .notNull()
      .references(() => patients.id, { onDelete: "restrict" }),
    optometristId: uuid()
      .notNull()
      .references(() => users.id, { onDelete: "restrict" }),
    appointmentId: uuid().references(() => appointments.id, { onDelete: "set null" }),
    /** When the exam took place (the visit), shown in the practice's time zone. */
    examinedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    status: examStatusEnum().notNull().default("in_progress"),
    signedAt: timestamp({ withTimezone: true }),
    signedById: uuid().references(() => users.id, { onDelete: "restrict" }),
    /** The triage proposal as of the last section save (recomputed on every save). */
    triage: jsonb().$type<{
      urgency: "same_day" | "urgent" | "soon" | "routine" | null;
      reasons: { urgency: string; eye?: string; rule: string; source: string }[];
    }>(),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    index("exams_patient_examined_idx").on(t.patientId, t.examinedAt),
    index("exams_appointment_idx").on(t.appointmentId),
    check(
      "exams_signed_consistent",
      sql`(${t.status} = 'signed') = (${t.signedAt} is not null and ${t.signedById} is not null)`,
    ),
  ],
);

const examRef = () =>
  uuid()
    .notNull()
    .references(() => exams.id, { onDelete: "cascade" });

export const eyeEnum = pgEnum("eye", ["right", "left"]);
export const eyeOrBothEnum = pgEnum("eye_or_both", ["right", "left", "both"]);

/** Case history. */
export const examHistory = pgTable("exam_history", {
  examId: examRef().primaryKey(),
  reason: text().notNull().default(""),
  symptoms: text().notNull().default(""),
  ocularHistory: text().notNull().default(""),
  generalHistory: text().notNull().default(""),
  medications: text().notNull().default(""),
  familyHistory: text().notNull().default(""),
  updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
});

export const acuityDistanceEnum = pgEnum("acuity_distance", ["distance", "near"]);
export const acuityCorrectionEnum = pgEnum("acuity_correction", ["unaided", "habitual", "best", "pinhole"]);
/** The scale an acuity was typed in: the distance notations of practice settings, near in N-point or M units, or a low-vision category. */
export const acuityScaleEnum = pgEnum("acuity_scale", [
  "metric",
  "feet",
  "decimal",
  "logmar",
  "n_point",
  "m_units",
  "low_vision",
]);

/** Visual acuity: one row per eye (or both) × distance × correction, as typed and as logMAR. */
export const examAcuity = pgTable(
  "exam_acuity",
  {
    id: uuid().primaryKey().defaultRandom(),
    examId: examRef(),
    eye: eyeOrBothEnum().notNull(),
    distance: acuityDistanceEnum().notNull(),
    correction: acuityCorrectionEnum().notNull(),
    notation: text().notNull(),
    /** The scale the notation was read in (null on rows from before the scale was recorded). */
    scale: acuityScaleEnum(),
    /** logMAR equivalent (counting fingers, hand movements, light perception and none carry conventional stand-in values). */
    logMar: doublePrecision().notNull(),
  },
  (t) => [
    uniqueIndex("exam_acuity_uq").on(t.examId, t.eye, t.distance, t.correction),
    check("exam_acuity_range", sql`${t.logMar} between -0.5 and 3`),
  ],
);

export const refractionKindEnum = pgEnum("refraction_kind", [
  "habitual",
  "autorefraction",
  "retinoscopy",
  "subjective",
  "cycloplegic",
  "final",
]);
export const prismBaseEnum = pgEnum("prism_base", ["up", "down", "in", "out"]);

/**
 * One refraction row: one eye, one kind (habitual spectacles by lensometry, autorefraction,
 * retinoscopy, subjective, cycloplegic, final). The text as typed is kept beside the parsed values.
 */
export const examRefractions = pgTable(
  "exam_refractions",
  {
    id: uuid().primaryKey().defaultRandom(),
    examId: examRef(),
    kind: refractionKindEnum().notNull(),
    eye: eyeEnum().notNull(),
    rawText: text().notNull(),
    sphere: doublePrecision().notNull(),
    cylinder: doublePrecision().notNull(),
    axis: integer().notNull(),
    addPower: doublePrecision(),
    prismDioptres: doublePrecision(),
    prismBase: prismBaseEnum(),
    vertexMm: doublePrecision(),
    vaNotation: text(),
    vaLogMar: doublePrecision(),
    /** A final refraction supplied after signing comes with the addendum that records who gave it and when. */
    addendumId: uuid().references((): AnyPgColumn => examAddenda.id, { onDelete: "restrict" }),
  },
  (t) => [
    uniqueIndex("exam_refractions_uq").on(t.examId, t.kind, t.eye),
    check("exam_refractions_axis", sql`${t.axis} between 1 and 180`),
    check("exam_refractions_powers", sql`abs(${t.sphere}) <= 30 and abs(${t.cylinder}) <= 30`),
    check("exam_refractions_add", sql`${t.addPower} is null or ${t.addPower} between 0.25 and 4`),
    check(
      "exam_refractions_prism",
      sql`(${t.prismDioptres} is null) = (${t.prismBase} is null) and (${t.prismDioptres} is null or ${t.prismDioptres} between 0.25 and 20)`,
    ),
    check("exam_refractions_vertex", sql`${t.vertexMm} is null or ${t.vertexMm} between 0 and 25`),
  ],
);

/** Binocular vision: cover test, near point of convergence, stereo. */
export const examBinocular = pgTable("exam_binocular", {
  examId: examRef().primaryKey(),
  coverTestDistance: text().notNull().default(""),
  coverTestNear: text().notNull().default(""),
  npcCm: doublePrecision(),
  stereoTest: text().notNull().default(""),
  stereoArcSec: integer(),
  notes: text().notNull().default(""),
  updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
});

export const iopMethodEnum = pgEnum("iop_method", [
  "goldmann",
  "non_contact",
  "rebound",
  "handheld_applanation",
  "other",
]);

/** Intraocular pressure: each reading of each eye with its method and time of day (the mean is used). */
export const examIop = pgTable(
  "exam_iop",
  {
    id: uuid().primaryKey().defaultRandom(),
    examId: examRef(),
    eye: eyeEnum().notNull(),
    /** 1, 2, 3… in the order taken. */
    reading: integer().notNull().default(1),
    mmHg: doublePrecision().notNull(),
    method: iopMethodEnum().notNull(),
    measuredTime: time().notNull(),
  },
  (t) => [
    uniqueIndex("exam_iop_reading_uq").on(t.examId, t.eye, t.reading),
    check("exam_iop_range", sql`${t.mmHg} between 1 and 80`),
    check("exam_iop_reading", sql`${t.reading} between 1 and 6`),
  ],
);

/** Central corneal thickness per eye when measured (pachymetry), micrometres. */
export const examCornealThickness = pgTable(
  "exam_corneal_thickness",
  {
    examId: examRef(),
    eye: eyeEnum().notNull(),
    micrometres: integer().notNull(),
  },
  (t) => [
    primaryKey({ columns: [t.examId, t.eye] }),
    check("exam_corneal_thickness_range", sql`${t.micrometres} between 300 and 800`),
  ],
);

export const colourTestEnum = pgEnum("colour_test", ["plates_38", "plates_24", "plates_other", "arrangement", "other"]);
export const colourResultEnum = pgEnum("colour_result", ["normal", "red_green", "blue_yellow", "inconclusive"]);

/** Colour vision per eye. */
export const examColourVision = pgTable(
  "exam_colour_vision",
  {
    id: uuid().primaryKey().defaultRandom(),
    examId: examRef(),
    eye: eyeEnum().notNull(),
    test: colourTestEnum().notNull(),
    platesCorrect: integer(),
    platesShown: integer(),
    result: colourResultEnum().notNull(),
    notes: text().notNull().default(""),
  },
  (t) => [
    uniqueIndex("exam_colour_vision_uq").on(t.examId, t.eye),
    check(
      "exam_colour_plates",
      sql`${t.platesCorrect} is null or (${t.platesShown} is not null and ${t.platesCorrect} between 0 and ${t.platesShown})`,
    ),
  ],
);

export const fieldMethodEnum = pgEnum("field_method", ["confrontation", "amsler", "automated"]);
export const reliabilityEnum = pgEnum("reliability", ["good", "fair", "poor"]);

/** Visual field and blind spot per eye (degrees from fixation; x positive temporally). */
export const examVisualFields = pgTable(
  "exam_visual_fields",
  {
    id: uuid().primaryKey().defaultRandom(),
    examId: examRef(),
    eye: eyeEnum().notNull(),
    method: fieldMethodEnum().notNull(),
    blindSpotXDeg: doublePrecision(),
    blindSpotYDeg: doublePrecision(),
    blindSpotWidthDeg: doublePrecision(),
    blindSpotHeightDeg: doublePrecision(),
    defectPresent: boolean().notNull().default(false),
    defects: text().notNull().default(""),
    reliability: reliabilityEnum(),
  },
  (t) => [
    uniqueIndex("exam_visual_fields_uq").on(t.examId, t.eye),
    check(
      "exam_visual_fields_blind_spot",
      sql`(${t.blindSpotXDeg} is null and ${t.blindSpotYDeg} is null and ${t.blindSpotWidthDeg} is null and ${t.blindSpotHeightDeg} is null) or (${t.blindSpotXDeg} is not null and ${t.blindSpotYDeg} is not null and ${t.blindSpotWidthDeg} > 0 and ${t.blindSpotHeightDeg} > 0)`,
    ),
  ],
);

export const segmentEnum = pgEnum("segment", ["anterior", "posterior"]);

/** Anterior or posterior segment findings per eye: ticked structures with findings plus free text. */
export const examSegments = pgTable(
  "exam_segments",
  {
    id: uuid().primaryKey().defaultRandom(),
    examId: examRef(),
    eye: eyeEnum().notNull(),
    segment: segmentEnum().notNull(),
    /** Keys of the structures marked normal, from the list in app/lib/exam/sections.ts. */
    normal: jsonb().$type<string[]>().notNull().default([]),
    notes: text().notNull().default(""),
  },
  (t) => [uniqueIndex("exam_segments_uq").on(t.examId, t.eye, t.segment)],
);

/**
 * Red-flag history, asked at this visit. Per-eye symptoms hold the eye(s) affected, null when
 * the patient denies it; a row means the questions were asked.
 */
export const examRedFlags = pgTable("exam_red_flags", {
  examId: examRef().primaryKey(),
  flashes: eyeOrBothEnum(),
  newFloaters: eyeOrBothEnum(),
  curtain: eyeOrBothEnum(),
  suddenLoss: eyeOrBothEnum(),
  severePain: eyeOrBothEnum(),
  redEye: eyeOrBothEnum(),
  distortion: eyeOrBothEnum(),
  newDiplopia: boolean().notNull().default(false),
  /** Headache with features of giant-cell arteritis (jaw claudication, scalp tenderness, visual symptoms, malaise, age over 50). */
  gcaSymptoms: boolean().notNull().default(false),
  /** Headache reported at this visit (any kind; features of raised intracranial pressure go in the notes). */
  headache: boolean().notNull().default(false),
  /** Onset, duration and anything else the patient said. */
  notes: text().notNull().default(""),
  updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
});

/** Pupils per eye. */
export const examPupils = pgTable(
  "exam_pupils",
  {
    examId: examRef(),
    eye: eyeEnum().notNull(),
    /** Round and reacting normally to light (direct and consensual) and near. */
    equalReactive: boolean().notNull().default(false),
    /** Relative afferent pupillary defect in this eye. */
    rapd: boolean().notNull().default(false),
    /** This pupil is the larger one (anisocoria). */
    larger: boolean().notNull().default(false),
    sizeMm: doublePrecision(),
    notes: text().notNull().default(""),
  },
  (t) => [
    primaryKey({ columns: [t.examId, t.eye] }),
    check("exam_pupils_size", sql`${t.sizeMm} is null or ${t.sizeMm} between 1 and 10`),
  ],
);

export const acCellsEnum = pgEnum("ac_cells", ["none", "trace", "1+", "2+", "3+", "4+"]);

/** Anterior chamber per eye: van Herick angle grade, cells, hyphaema, hypopyon. */
export const examAnteriorChamber = pgTable(
  "exam_anterior_chamber",
  {
    examId: examRef(),
    eye: eyeEnum().notNull(),
    /** Van Herick grade 0 to 4 (peripheral chamber depth against corneal thickness). */
    vanHerick: integer(),
    cells: acCellsEnum(),
    hyphaema: boolean().notNull().default(false),
    hypopyon: boolean().notNull().default(false),
    notes: text().notNull().default(""),
  },
  (t) => [
    primaryKey({ columns: [t.examId, t.eye] }),
    check("exam_anterior_chamber_van_herick", sql`${t.vanHerick} is null or ${t.vanHerick} between 0 and 4`),
  ],
);

export const discMarginsEnum = pgEnum("disc_margins", ["distinct", "blurred"]);

/** Optic disc per eye. */
export const examDiscs = pgTable(
  "exam_discs",
  {
    examId: examRef(),
    eye: eyeEnum().notNull(),
    verticalCd: doublePrecision(),
    margins: discMarginsEnum(),
    swelling: boolean().notNull().default(false),
    haemorrhage: boolean().notNull().default(false),
    pallor: boolean().notNull().default(false),
    notes: text().notNull().default(""),
  },
  (t) => [
    primaryKey({ columns: [t.examId, t.eye] }),
    check("exam_discs_cd", sql`${t.verticalCd} is null or ${t.verticalCd} between 0 and 1`),
  ],
);

/** Macula, vitreous and periphery findings per eye. */
export const examFundus = pgTable(
  "exam_fundus",
  {
    examId: examRef(),
    eye: eyeEnum().notNull(),
    vitreousDetachment: boolean().notNull().default(false),
    vitreousPigment: boolean().notNull().default(false),
    retinalBreak: boolean().notNull().default(false),
    retinalDetachment: boolean().notNull().default(false),
    drusen: boolean().notNull().default(false),
    suspectedWetAmd: boolean().notNull().default(false),
    maculaNotes: text().notNull().default(""),
    peripheryNotes: text().notNull().default(""),
  },
  (t) => [primaryKey({ columns: [t.examId, t.eye] })],
);

export const dilatingDrugEnum = pgEnum("dilating_drug", ["tropicamide", "phenylephrine", "cyclopentolate", "other"]);

/** Drops instilled to dilate: drug, strength, eye(s), time. */
export const examDilations = pgTable(
  "exam_dilations",
  {
    id: uuid().primaryKey().defaultRandom(),
    examId: examRef(),
    drug: dilatingDrugEnum().notNull(),
    otherDrug: text().notNull().default(""),
    strengthPercent: doublePrecision().notNull(),
    eye: eyeOrBothEnum().notNull(),
    instilledAt: timestamp({ withTimezone: true }).notNull(),
    batch: text().notNull().default(""),
  },
  (t) => [
    index("exam_dilations_exam_idx").on(t.examId, t.instilledAt),
    check("exam_dilations_strength", sql`${t.strengthPercent} > 0 and ${t.strengthPercent} <= 10`),
  ],
);

/** A second clinician's countersignature of a signed exam. */
export const examCountersignatures = pgTable(
  "exam_countersignatures",
  {
    examId: examRef(),
    clinicianId: uuid()
      .notNull()
      .references(() => users.id, { onDelete: "restrict" }),
    note: text().notNull().default(""),
    signedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [primaryKey({ columns: [t.examId, t.clinicianId] })],
);

/** Assessment and plan. */
export const examAssessment = pgTable("exam_assessment", {
  examId: examRef().primaryKey(),
  assessment: text().notNull().default(""),
  plan: text().notNull().default(""),
  recallMonths: integer(),
  updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
});

/** Diagnoses, ICD-10 coded. */
export const examDiagnoses = pgTable(
  "exam_diagnoses",
  {
    examId: examRef(),
    code: text().notNull(),
    label: text().notNull(),
    eye: eyeOrBothEnum().notNull().default("both"),
  },
  (t) => [
    primaryKey({ columns: [t.examId, t.code, t.eye] }),
    check("exam_diagnoses_code", sql`${t.code} ~ '^[A-Z][0-9]{2}(\\.[0-9A-Z]{1,4})?$'`),
  ],
);

/** Corrections to a signed exam: never edited, each with its author and time. */
export const examAddenda = pgTable(
  "exam_addenda",
  {
    id: uuid().primaryKey().defaultRandom(),
    examId: examRef(),
    authorId: uuid()
      .notNull()
      .references(() => users.id, { onDelete: "restrict" }),
    section: text().notNull(),
    body: text().notNull(),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    index("exam_addenda_exam_idx").on(t.examId, t.createdAt),
    check("exam_addenda_body", sql`length(${t.body}) > 0`),
  ],
);

/**
 * Where each section of an exam stands, so the page shows it after a reload: when it was last
 * saved, and when a save was last refused, with what was typed and why (the refused values are
 * kept here, never in the section's own tables, until a save of the section succeeds).
 */
export const examSectionStates = pgTable(
  "exam_section_states",
  {
    examId: examRef(),
    /** The section's id in the exam's section list. */
    section: text().notNull(),
    savedAt: timestamp({ withTimezone: true }),
    failedAt: timestamp({ withTimezone: true }),
    failureMessage: text(),
    /** The refused form, as [field, value] pairs in the order they were sent. */
    refusedValues: jsonb().$type<[string, string][]>(),
    refusedErrors: jsonb().$type<Record<string, string[]>>(),
  },
  (t) => [primaryKey({ columns: [t.examId, t.section] })],
);
