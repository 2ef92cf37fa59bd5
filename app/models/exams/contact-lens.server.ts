/** Saving and loading the exam's contact-lens sections (fitting and aftercare). */
import { and, eq } from "drizzle-orm";
import { examContactLens } from "~/db/schema";
import {
  CL_COMMON_PARTS,
  CL_EYE_PARTS,
  clField,
  clSectionIsEmpty,
  parseClSection,
  type ClSection,
  type ClSectionId,
} from "~/lib/contact-lens/sections";
import type { AcuityNotation } from "~/lib/optics";
import { catalogueLenses } from "~/models/prescriptions/contact-lenses.server";
import { db, type Tx } from "~/utils/db.server";
import { SectionError } from "./exam-records.server";

type Form = Record<string, string | undefined>;
const NAMES = [
  ...(["right", "left"] as const).flatMap((eye) => CL_EYE_PARTS.map((p) => clField(eye, p))),
  ...CL_COMMON_PARTS,
];

/** Writes a contact-lens section in the caller's transaction, or throws its field errors. */
export async function saveContactLensSection(
  tx: Tx,
  examId: string,
  section: ClSectionId,
  form: Form,
  notation: AcuityNotation,
) {
  const where = and(eq(examContactLens.examId, examId), eq(examContactLens.section, section));
  if (clSectionIsEmpty(form)) {
    await tx.delete(examContactLens).where(where);
    return;
  }
  const parsed = parseClSection(section, form, await catalogueLenses({}, tx), notation);
  if (!parsed.ok) throw SectionError.inFields(parsed.errors);
  const fields: Record<string, string> = {};
  for (const k of NAMES) {
    const v = (form[k] ?? "").trim();
    if (v) fields[k] = v.slice(0, 4000);
  }
  await tx
    .insert(examContactLens)
    .values({ examId, section, fields, data: parsed.value })
    .onConflictDoUpdate({
      target: [examContactLens.examId, examContactLens.section],
      set: { fields, data: parsed.value, updatedAt: new Date() },
    });
}

export async function loadContactLens(examId: string, conn: Tx | typeof db = db) {
  const rows = await conn.select().from(examContactLens).where(eq(examContactLens.examId, examId));
  return rows.map((r) => ({ section: r.section as ClSectionId, fields: r.fields, data: r.data as ClSection }));
}

/** The contact-lens sections as the exam page's fields name them (`cl_fitting.right_power`…). */
export function contactLensFormValues(rows: Awaited<ReturnType<typeof loadContactLens>>) {
  const v: Record<string, string> = {};
  for (const r of rows) for (const [k, x] of Object.entries(r.fields)) v[`${r.section}.${k}`] = x;
  return v;
}

/** The fitting the prescription is issued from: its eyes with a catalogue lens, BC, diameter and power. */
export async function fittedLenses(examId: string, conn: Tx | typeof db = db) {
  const [row] = await conn
    .select({ data: examContactLens.data })
    .from(examContactLens)
    .where(and(eq(examContactLens.examId, examId), eq(examContactLens.section, "cl_fitting")));
  return (row?.data as ClSection | undefined) ?? null;
}
