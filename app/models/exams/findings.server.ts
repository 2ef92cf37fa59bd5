/**
 * Saving and loading the exam's clinical findings: red-flag history, pupils, anterior chamber,
 * optic disc, fundus and dilation. Each save parses the whole section (app/lib/exam/sections.ts)
 * and writes it in the caller's transaction, or throws the field errors so nothing is written.
 */
import { asc, eq } from "drizzle-orm";
import { examAnteriorChamber, examDilations, examDiscs, examFundus, examPupils, examRedFlags } from "~/db/schema";
import {
  acField,
  discField,
  dilationField,
  EYES,
  FUNDUS_FINDINGS,
  fundusField,
  localDateTime,
  parseAnteriorChamber,
  parseDilations,
  parseDiscs,
  parseFundus,
  parsePupils,
  parseRedFlags,
  pupilField,
  RED_FLAGS,
  redFlagField,
  type FieldErrors,
  type FundusKey,
  type Parsed,
  type RedFlagKey,
} from "~/lib/exam/sections";
import { allOf, db, type Tx } from "~/utils/db.server";
import { DomainError } from "~/utils/failure.server";

type Form = Record<string, string | undefined>;
type Conn = Tx | typeof db;

export class FindingsError extends DomainError {
  static inFields(fieldErrors: FieldErrors) {
    return new FindingsError("Some fields need attention; nothing in this section was saved.", { fieldErrors });
  }
}
function valueOf<T>(p: Parsed<T>): T {
  if (!p.ok) throw FindingsError.inFields(p.errors);
  return p.value;
}

export const FINDINGS_SECTIONS = ["redflags", "pupils", "ac", "disc", "fundus", "dilation"] as const;
export type FindingsSection = (typeof FINDINGS_SECTIONS)[number];

export async function saveFindings(
  tx: Tx,
  examId: string,
  section: FindingsSection,
  form: Form,
  ctx: { now: Date; examinedAt: Date; timeZone: string },
) {
  if (section === "redflags") {
    const v = valueOf(parseRedFlags(form));
    await tx
      .insert(examRedFlags)
      .values({ examId, ...v })
      .onConflictDoUpdate({ target: examRedFlags.examId, set: { ...v, updatedAt: new Date() } });
  } else if (section === "pupils") {
    const v = valueOf(parsePupils(form));
    await tx.delete(examPupils).where(eq(examPupils.examId, examId));
    const rows = EYES.flatMap((eye) => (v[eye] ? [{ examId, eye, ...v[eye] }] : []));
    if (rows.length) await tx.insert(examPupils).values(rows);
  } else if (section === "ac") {
    const v = valueOf(parseAnteriorChamber(form));
    await tx.delete(examAnteriorChamber).where(eq(examAnteriorChamber.examId, examId));
    const rows = EYES.flatMap((eye) => (v[eye] ? [{ examId, eye, ...v[eye] }] : []));
    if (rows.length) await tx.insert(examAnteriorChamber).values(rows);
  } else if (section === "disc") {
    const v = valueOf(parseDiscs(form));
    await tx.delete(examDiscs).where(eq(examDiscs.examId, examId));
    const rows = EYES.flatMap((eye) => (v[eye] ? [{ examId, eye, ...v[eye] }] : []));
    if (rows.length) await tx.insert(examDiscs).values(rows);
  } else if (section === "fundus") {
    const v = valueOf(parseFundus(form));
    await tx.delete(examFundus).where(eq(examFundus.examId, examId));
    const rows = EYES.flatMap((eye) => (v[eye] ? [{ examId, eye, ...v[eye] }] : []));
    if (rows.length) await tx.insert(examFundus).values(rows);
  } else if (section === "dilation") {
    const v = valueOf(parseDilations(form, ctx));
    await tx.delete(examDilations).where(eq(examDilations.examId, examId));
    if (v.length) await tx.insert(examDilations).values(v.map((d) => ({ examId, ...d })));
  }
}

export async function loadFindings(examId: string, conn: Conn = db) {
  const [redFlags, pupils, anteriorChamber, discs, fundus, dilations] = await allOf(conn, [
    conn.select().from(examRedFlags).where(eq(examRedFlags.examId, examId)),
    conn.select().from(examPupils).where(eq(examPupils.examId, examId)),
    conn.select().from(examAnteriorChamber).where(eq(examAnteriorChamber.examId, examId)),
    conn.select().from(examDiscs).where(eq(examDiscs.examId, examId)),
    conn.select().from(examFundus).where(eq(examFundus.examId, examId)),
    conn.select().from(examDilations).where(eq(examDilations.examId, examId)).orderBy(asc(examDilations.instilledAt)),
  ]);
  return { redFlags: redFlags[0] ?? null, pupils, anteriorChamber, discs, fundus, dilations };
}
export type Findings = Awaited<ReturnType<typeof loadFindings>>;

/** The findings as the exam page's form fields name them. */
export function findingsFormValues(f: Findings, timeZone: string): Record<string, string> {
  const v: Record<string, string> = {};
  const put = (k: string, x: unknown) => {
    if (x !== null && x !== undefined && x !== "" && x !== false) v[k] = x === true ? "on" : String(x);
  };
  if (f.redFlags) {
    for (const k of Object.keys(RED_FLAGS) as RedFlagKey[]) put(redFlagField(k), f.redFlags[k]);
    put("rf_newDiplopia", f.redFlags.newDiplopia);
    put("rf_gcaSymptoms", f.redFlags.gcaSymptoms);
    put("rf_headache", f.redFlags.headache);
    put("rf_notes", f.redFlags.notes);
    v.rf_asked = "yes";
  }
  for (const r of f.pupils) {
    put(pupilField(r.eye, "equal"), r.equalReactive);
    put(pupilField(r.eye, "rapd"), r.rapd);
    put(pupilField(r.eye, "larger"), r.larger);
    put(pupilField(r.eye, "size"), r.sizeMm);
    put(pupilField(r.eye, "notes"), r.notes);
  }
  for (const r of f.anteriorChamber) {
    put(acField(r.eye, "vh"), r.vanHerick);
    put(acField(r.eye, "cells"), r.cells);
    put(acField(r.eye, "hyphaema"), r.hyphaema);
    put(acField(r.eye, "hypopyon"), r.hypopyon);
    put(acField(r.eye, "notes"), r.notes);
  }
  for (const r of f.discs) {
    put(discField(r.eye, "cd"), r.verticalCd?.toFixed(2));
    put(discField(r.eye, "margins"), r.margins);
    put(discField(r.eye, "swelling"), r.swelling);
    put(discField(r.eye, "haem"), r.haemorrhage);
    put(discField(r.eye, "pallor"), r.pallor);
    put(discField(r.eye, "notes"), r.notes);
  }
  for (const r of f.fundus) {
    for (const k of Object.keys(FUNDUS_FINDINGS) as FundusKey[]) put(fundusField(r.eye, k), r[k]);
    put(fundusField(r.eye, "macula"), r.maculaNotes);
    put(fundusField(r.eye, "periphery"), r.peripheryNotes);
  }
  f.dilations.forEach((d, i) => {
    const n = i + 1;
    put(dilationField(n, "drug"), d.drug);
    put(dilationField(n, "other"), d.otherDrug);
    put(dilationField(n, "strength"), d.strengthPercent);
    put(dilationField(n, "eye"), d.eye);
    put(dilationField(n, "at"), localDateTime(d.instilledAt, timeZone));
    put(dilationField(n, "batch"), d.batch);
  });
  return v;
}
