import { sql } from "drizzle-orm";
import {
  boolean,
  check,
  date,
  doublePrecision,
  index,
  integer,
  pgEnum,
  pgTable,
  text,
  timestamp,
  uniqueIndex,
  uuid,
} from "drizzle-orm/pg-core";
import { users } from "./auth";
import { contactLenses, lensReplacementEnum } from "./contact-lenses";
import { eyeEnum, exams, prismBaseEnum } from "./exams";
import { patients } from "./patients";

export const prescriptionKindEnum = pgEnum("prescription_kind", ["spectacle", "contact_lens"]);
/** What the prescription says beside the powers: nothing, no prescription needed, or no clinical change. */
export const prescriptionStatementEnum = pgEnum("prescription_statement", ["none", "not_needed", "no_change"]);

/**
 * A prescription issued (and so signed) by its prescriber from a signed exam's final refraction.
 * Never edited: a new one is issued instead.
 */
export const prescriptions = pgTable(
  "prescriptions",
  {
    id: uuid().primaryKey().defaultRandom(),
    patientId: uuid()
      .notNull()
      .references(() => patients.id, { onDelete: "restrict" }),
    examId: uuid()
      .notNull()
      .references(() => exams.id, { onDelete: "restrict" }),
    kind: prescriptionKindEnum().notNull(),
    issuedById: uuid()
      .notNull()
      .references(() => users.id, { onDelete: "restrict" }),
    issuedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    expiresOn: date({ mode: "string" }).notNull(),
    /** Prescriber's name and licence number as they were at issue. */
    prescriberName: text().notNull(),
    prescriberLicence: text().notNull(),
    notes: text().notNull().default(""),
    /** Contact lenses: the lens the powers are for. */
    lensName: text(),
    /** Spectacles: what the lenses are for (distance, near, varifocal…). */
    lensUse: text(),
    statement: prescriptionStatementEnum().notNull().default("none"),
    /** Whether the patient was referred at this exam (printed on the prescription). */
    referred: boolean().notNull().default(false),
  },
  (t) => [index("prescriptions_patient_idx").on(t.patientId, t.issuedAt), index("prescriptions_exam_idx").on(t.examId)],
);

/**
 * One eye of a prescription. For contact lenses the spectacle-plane refraction and the exact
 * corneal-plane power are kept beside the rounded powers that are ordered.
 */
export const prescriptionEyes = pgTable(
  "prescription_eyes",
  {
    id: uuid().primaryKey().defaultRandom(),
    prescriptionId: uuid()
      .notNull()
      .references(() => prescriptions.id, { onDelete: "cascade" }),
    eye: eyeEnum().notNull(),
    sphere: doublePrecision().notNull(),
    cylinder: doublePrecision().notNull(),
    axis: integer().notNull(),
    addPower: doublePrecision(),
    prismDioptres: doublePrecision(),
    prismBase: prismBaseEnum(),
    vertexMm: doublePrecision(),
    /** Contact lenses: the vertex-converted power before rounding. */
    exactSphere: doublePrecision(),
    exactCylinder: doublePrecision(),
    exactAxis: integer(),
    /** Contact lenses: the spectacle refraction it came from. */
    spectacleSphere: doublePrecision(),
    spectacleCylinder: doublePrecision(),
    spectacleAxis: integer(),
    baseCurveMm: doublePrecision(),
    diameterMm: doublePrecision(),
    /** Spectacles: intermediate add; prism as horizontal and vertical components with their bases. */
    intermediateAdd: doublePrecision(),
    prismHorizontal: doublePrecision(),
    prismHorizontalBase: prismBaseEnum(),
    prismVertical: doublePrecision(),
    prismVerticalBase: prismBaseEnum(),
    /** Contact lenses: the catalogue lens fitted, and its maker, name, material and replacement as at issue. */
    contactLensId: uuid().references(() => contactLenses.id, { onDelete: "restrict" }),
    lensManufacturer: text(),
    lensName: text(),
    lensMaterial: text(),
    lensReplacement: lensReplacementEnum(),
    /** Monocular pupillary distances, mm. */
    pdDistanceMm: doublePrecision(),
    pdNearMm: doublePrecision(),
  },
  (t) => [
    uniqueIndex("prescription_eyes_uq").on(t.prescriptionId, t.eye),
    check("prescription_eyes_axis", sql`${t.axis} between 1 and 180`),
  ],
);
