import { sql } from "drizzle-orm";
import {
  boolean,
  check,
  doublePrecision,
  integer,
  jsonb,
  pgEnum,
  pgTable,
  primaryKey,
  text,
  timestamp,
  uuid,
} from "drizzle-orm/pg-core";
import { exams } from "./exams";

export const lensReplacementEnum = pgEnum("lens_replacement", [
  "daily",
  "two_weekly",
  "monthly",
  "quarterly",
  "yearly",
]);

/**
 * The practice's small contact-lens catalogue, kept by the owner: what each lens is made in. A
 * contact-lens prescription names one of these lenses and only powers, base curves and
 * diameters the lens is made in. Toric lenses list their cylinder powers and axis step; a
 * spherical lens lists no cylinders.
 */
export const contactLenses = pgTable(
  "contact_lenses",
  {
    id: uuid().primaryKey().defaultRandom(),
    manufacturer: text().notNull(),
    name: text().notNull(),
    material: text().notNull(),
    replacement: lensReplacementEnum().notNull(),
    baseCurvesMm: doublePrecision().array().notNull(),
    diametersMm: doublePrecision().array().notNull(),
    sphereMin: doublePrecision().notNull(),
    sphereMax: doublePrecision().notNull(),
    sphereStep: doublePrecision().notNull(),
    /** Toric lenses: the cylinder powers made (minus cylinder); empty for a spherical lens. */
    cylinders: doublePrecision()
      .array()
      .notNull()
      .default(sql`'{}'::double precision[]`),
    /** Toric lenses: axes are made in steps of this many degrees. */
    axisStep: integer(),
    active: boolean().notNull().default(true),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    check("contact_lenses_sphere_range", sql`${t.sphereMin} < ${t.sphereMax}`),
    check("contact_lenses_sphere_step", sql`${t.sphereStep} > 0`),
    check(
      "contact_lenses_toric_axis",
      sql`(cardinality(${t.cylinders}) = 0 and ${t.axisStep} is null) or (cardinality(${t.cylinders}) > 0 and ${t.axisStep} between 1 and 90)`,
    ),
  ],
);

/**
 * The exam's contact-lens sections (fitting and aftercare). `fields` keeps the values as the
 * page names them (text as typed, already validated); `data` the parsed section the prescription
 * is issued from.
 */
export const examContactLens = pgTable(
  "exam_contact_lens",
  {
    examId: uuid()
      .notNull()
      .references(() => exams.id, { onDelete: "cascade" }),
    section: text().notNull(),
    fields: jsonb().$type<Record<string, string>>().notNull(),
    data: jsonb().notNull(),
    updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    primaryKey({ columns: [t.examId, t.section] }),
    check("exam_contact_lens_section", sql`${t.section} in ('cl_fitting', 'cl_aftercare')`),
  ],
);
