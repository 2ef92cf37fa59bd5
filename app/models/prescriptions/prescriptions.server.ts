import { and, desc, eq, inArray } from "drizzle-orm";
import type { LensUse, Statement } from "~/lib/prescriptions/wording";
import { examRefractions, exams, practiceSettings, prescriptionEyes, prescriptions } from "~/db/schema";
import { roundRx, toCylinderForm, vertexConvert, type SphCyl } from "~/lib/optics";
import {
  checkBaseCurve,
  checkDiameter,
  checkLensPower,
  lensLabel,
  type CatalogueLens,
} from "~/lib/contact-lens/catalogue";
import { parseNumber, parseRxText } from "~/lib/exam/sections";
import { fittedLenses } from "~/models/exams/contact-lens.server";
import { audit } from "~/utils/audit.server";
import { db, type Tx } from "~/utils/db.server";
import { DomainError } from "~/utils/failure.server";
import { catalogueLenses } from "./contact-lenses.server";
import type { SessionUser } from "~/utils/session.server";

/** Spectacle vertex distance assumed when the final refraction records none, mm (common practice). */
export const DEFAULT_VERTEX_MM = 12;
/** Contact-lens powers are ordered in 0.25 D steps (common practice). */
export const CONTACT_LENS_STEP_D = 0.25;

export { rxCautions } from "~/lib/exam/sections";

/** ISO date `months` after `from`, in UTC (day clamped to the month's end). */
export function addMonths(from: Date, months: number) {
  const y = from.getUTCFullYear();
  const m = from.getUTCMonth() + months;
  const last = new Date(Date.UTC(y, m + 1, 0)).getUTCDate();
  return new Date(Date.UTC(y, m, Math.min(from.getUTCDate(), last))).toISOString().slice(0, 10);
}

/**
 * Corneal-plane power from a spectacle refraction, exact and rounded (minus-cylinder form): a
 * guide printed beside a contact-lens prescription, never the power ordered (that is the fitted
 * lens's, in the lens's steps).
 */
export function contactLensPower(spectacle: SphCyl, vertexMm: number) {
  const exact = vertexConvert(spectacle, vertexMm, 0);
  return { exact, rounded: roundRx(exact, CONTACT_LENS_STEP_D) };
}

export { LENS_USES, STATEMENTS, type LensUse } from "~/lib/prescriptions/wording";

export type SpectacleInput = {
  kind: "spectacle";
  notes: string;
  lensUse: LensUse;
  statement: Statement;
  referred: boolean;
  eyes: Partial<
    Record<"right" | "left", { intermediateAdd: number | null; pdDistanceMm: number | null; pdNearMm: number | null }>
  >;
};
/** What the prescriber types per eye for a contact-lens prescription (text as typed). */
export type ContactLensEyeInput = { lensId: string; bc: string; dia: string; power: string };
export type ContactLensInput = {
  kind: "contact_lens";
  notes: string;
  eyes: Partial<Record<"right" | "left", ContactLensEyeInput>>;
};
export type IssueInput = SpectacleInput | ContactLensInput;

/** A prescription refused before anything is written, with the fields at fault. */
export class PrescriptionError extends DomainError {}

const HORIZONTAL = new Set(["in", "out"]);
const SIDE = { right: "Right", left: "Left" } as const;

/**
 * Checks a contact-lens prescription's eyes against the signed exam's fitting and the catalogue:
 * each eye prescribed was fitted with that catalogue lens, and its base curve, diameter and power
 * are ones the lens is made in. Throws PrescriptionError naming every field at fault.
 */
async function checkedContactLensEyes(tx: Tx, examId: string, input: ContactLensInput) {
  const fitting = await fittedLenses(examId, tx);
  const fittedEyes = (["right", "left"] as const).filter((e) => fitting?.eyes[e]?.lensId);
  if (!fittedEyes.length)
    throw new PrescriptionError(
      "A contact-lens prescription is issued only from a fitted lens: record the lens fitted in the exam's contact-lens fitting section first.",
      { status: 409 },
    );
  const catalogue = await catalogueLenses({}, tx);
  const errors: Record<string, string[]> = {};
  const add = (k: string, m: string) => (errors[k] ??= []).push(m);
  const out: {
    eye: "right" | "left";
    lens: CatalogueLens;
    bc: number;
    dia: number;
    power: SphCyl;
  }[] = [];
  for (const eye of fittedEyes) {
    const E = SIDE[eye];
    const given = input.eyes[eye];
    const fitted = fitting!.eyes[eye]!;
    if (!given) {
      add(`${eye}_power`, `${E} eye: the ${E.toLowerCase()} eye was fitted; give its prescription.`);
      continue;
    }
    const lens = catalogue.find((l) => l.id === given.lensId);
    if (!lens || given.lensId !== fitted.lensId) {
      add(`${eye}_lens`, `${E} eye: the prescription is for the lens fitted in the exam.`);
      continue;
    }
    const bc = parseNumber(given.bc, `${E} base curve (mm)`, 5, 11, { step: 0.01 });
    if (bc.error) add(`${eye}_bc`, bc.error);
    else if (bc.value === null) add(`${eye}_bc`, `${E} eye: give the base curve.`);
    else {
      const e = checkBaseCurve(lens, bc.value, `${E} base curve`);
      if (e) add(`${eye}_bc`, e);
    }
    const dia = parseNumber(given.dia, `${E} diameter (mm)`, 7, 25, { step: 0.1 });
    if (dia.error) add(`${eye}_dia`, dia.error);
    else if (dia.value === null) add(`${eye}_dia`, `${E} eye: give the diameter.`);
    else {
      const e = checkDiameter(lens, dia.value, `${E} diameter`);
      if (e) add(`${eye}_dia`, e);
    }
    const power = parseRxText(given.power, `${E} power`);
    if (power.error) add(`${eye}_power`, power.error);
    else if (!power.value)
      add(`${eye}_power`, `${E} eye: give the power (sphere, and cylinder and axis for a toric lens).`);
    else for (const e of checkLensPower(lens, power.value, `${E} power`)) add(`${eye}_power`, e);
    if (
      bc.value !== null &&
      dia.value !== null &&
      power.value &&
      !errors[`${eye}_bc`] &&
      !errors[`${eye}_dia`] &&
      !errors[`${eye}_power`]
    )
      out.push({ eye, lens, bc: bc.value, dia: dia.value, power: toCylinderForm(power.value, "minus") });
  }
  for (const eye of ["right", "left"] as const)
    if (input.eyes[eye] && !fittedEyes.includes(eye))
      add(`${eye}_power`, `${SIDE[eye]} eye: no lens was fitted to this eye, so none can be prescribed.`);
  if (Object.keys(errors).length)
    throw new PrescriptionError("The contact-lens prescription was not issued; check the fields named.", {
      fieldErrors: errors,
    });
  return out;
}

/** Issues a prescription from the signed exam, in one transaction. */
export async function issuePrescription(
  user: SessionUser,
  exam: { id: string; patientId: string },
  input: IssueInput,
  request: Request,
) {
  return db.transaction(async (tx) => {
    const [locked] = await tx.select({ status: exams.status }).from(exams).where(eq(exams.id, exam.id)).for("update");
    if (locked?.status !== "signed")
      throw new PrescriptionError("Sign the exam before issuing a prescription from it.", { status: 409 });
    const finals = await tx
      .select()
      .from(examRefractions)
      .where(and(eq(examRefractions.examId, exam.id), eq(examRefractions.kind, "final")));
    if (input.kind === "spectacle" && !finals.length)
      throw new PrescriptionError("The exam has no final refraction to prescribe from.", { status: 409 });
    const clEyes = input.kind === "contact_lens" ? await checkedContactLensEyes(tx, exam.id, input) : [];
    const [settings] = await tx.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
    const months =
      input.kind === "spectacle"
        ? (settings?.spectacleRxValidityMonths ?? 24)
        : (settings?.contactLensRxValidityMonths ?? 12);
    const issuedAt = new Date();
    const [rx] = await tx
      .insert(prescriptions)
      .values({
        patientId: exam.patientId,
        examId: exam.id,
        kind: input.kind,
        issuedById: user.id,
        issuedAt,
        expiresOn: addMonths(issuedAt, months),
        prescriberName: user.name,
        prescriberLicence: user.licenceNumber ?? "",
        notes: input.notes,
        lensName: input.kind === "contact_lens" ? [...new Set(clEyes.map((e) => lensLabel(e.lens)))].join(" / ") : null,
        lensUse: input.kind === "spectacle" ? input.lensUse : null,
        statement: input.kind === "spectacle" ? input.statement : "none",
        referred: input.kind === "spectacle" ? input.referred : false,
      })
      .returning({ id: prescriptions.id });
    if (input.kind === "spectacle") {
      for (const f of finals) {
        const extra = input.eyes[f.eye] ?? { intermediateAdd: null, pdDistanceMm: null, pdNearMm: null };
        const horizontal = f.prismBase ? HORIZONTAL.has(f.prismBase) : false;
        await tx.insert(prescriptionEyes).values({
          prescriptionId: rx!.id,
          eye: f.eye,
          sphere: f.sphere,
          cylinder: f.cylinder,
          axis: f.axis,
          addPower: f.addPower,
          intermediateAdd: extra.intermediateAdd,
          prismDioptres: f.prismDioptres,
          prismBase: f.prismBase,
          prismHorizontal: f.prismDioptres && horizontal ? f.prismDioptres : null,
          prismHorizontalBase: f.prismDioptres && horizontal ? f.prismBase : null,
          prismVertical: f.prismDioptres && !horizontal ? f.prismDioptres : null,
          prismVerticalBase: f.prismDioptres && !horizontal ? f.prismBase : null,
          // Printed only when it was measured (the final refraction records it).
          vertexMm: f.vertexMm,
          pdDistanceMm: extra.pdDistanceMm,
          pdNearMm: extra.pdNearMm,
        });
      }
    } else {
      for (const e of clEyes) {
        const final = finals.find((f) => f.eye === e.eye);
        const guide = final
          ? contactLensPower(
              { sphere: final.sphere, cylinder: final.cylinder, axis: final.axis },
              final.vertexMm ?? DEFAULT_VERTEX_MM,
            ).exact
          : null;
        await tx.insert(prescriptionEyes).values({
          prescriptionId: rx!.id,
          eye: e.eye,
          ...e.power,
          addPower: null,
          vertexMm: 0,
          exactSphere: guide?.sphere ?? null,
          exactCylinder: guide?.cylinder ?? null,
          exactAxis: guide?.axis ?? null,
          spectacleSphere: final?.sphere ?? null,
          spectacleCylinder: final?.cylinder ?? null,
          spectacleAxis: final?.axis ?? null,
          baseCurveMm: e.bc,
          diameterMm: e.dia,
          contactLensId: e.lens.id,
          lensManufacturer: e.lens.manufacturer,
          lensName: e.lens.name,
          lensMaterial: e.lens.material,
          lensReplacement: e.lens.replacement,
        });
      }
    }
    await audit(
      {
        action: "prescription.issued",
        actorUserId: user.id,
        entityType: "prescription",
        entityId: rx!.id,
        patientId: exam.patientId,
        detail: { kind: input.kind, examId: exam.id },
        request,
      },
      tx,
    );
    return rx!.id;
  });
}

export async function prescriptionsOf(patientId: string, examId?: string) {
  const list = await db
    .select()
    .from(prescriptions)
    .where(and(eq(prescriptions.patientId, patientId), examId ? eq(prescriptions.examId, examId) : undefined))
    .orderBy(desc(prescriptions.issuedAt));
  const eyes = list.length
    ? await db
        .select()
        .from(prescriptionEyes)
        .where(
          inArray(
            prescriptionEyes.prescriptionId,
            list.map((p) => p.id),
          ),
        )
    : [];
  return list.map((p) => ({
    ...p,
    issuedAt: p.issuedAt.toISOString(),
    eyes: eyes
      .filter((e) => e.prescriptionId === p.id)
      .sort((a, b) => (a.eye === "right" ? -1 : b.eye === "right" ? 1 : 0)),
  }));
}
export type PrescriptionView = Awaited<ReturnType<typeof prescriptionsOf>>[number];
