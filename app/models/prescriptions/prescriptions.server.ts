import { and, desc, eq, inArray } from "drizzle-orm";
import { data } from "react-router";
import { examRefractions, exams, practiceSettings, prescriptionEyes, prescriptions } from "~/db/schema";
import { roundRx, vertexConvert, type SphCyl } from "~/lib/optics";
import { audit } from "~/utils/audit.server";
import { db } from "~/utils/db.server";
import type { SessionUser } from "~/utils/session.server";

/** Spectacle vertex distance assumed when the final refraction records none, mm (common practice). */
export const DEFAULT_VERTEX_MM = 12;
/** Contact-lens powers are ordered in 0.25 D steps (common practice). */
export const CONTACT_LENS_STEP_D = 0.25;

export { RX_CAUTIONS } from "~/lib/exam/sections";

/** ISO date `months` after `from`, in UTC (day clamped to the month's end). */
export function addMonths(from: Date, months: number) {
  const y = from.getUTCFullYear();
  const m = from.getUTCMonth() + months;
  const last = new Date(Date.UTC(y, m + 1, 0)).getUTCDate();
  return new Date(Date.UTC(y, m, Math.min(from.getUTCDate(), last))).toISOString().slice(0, 10);
}

/** Corneal-plane contact-lens power from a spectacle refraction: exact and rounded (minus-cylinder form). */
export function contactLensPower(spectacle: SphCyl, vertexMm: number) {
  const exact = vertexConvert(spectacle, vertexMm, 0);
  return { exact, rounded: roundRx(exact, CONTACT_LENS_STEP_D) };
}

export type IssueInput = {
  kind: "spectacle" | "contact_lens";
  notes: string;
  lensName?: string;
  baseCurveMm?: number | null;
  diameterMm?: number | null;
};

/** Issues a prescription from the signed exam's final refraction, in one transaction. */
export async function issuePrescription(
  user: SessionUser,
  exam: { id: string; patientId: string },
  input: IssueInput,
  request: Request,
) {
  return db.transaction(async (tx) => {
    const [locked] = await tx.select({ status: exams.status }).from(exams).where(eq(exams.id, exam.id)).for("update");
    if (locked?.status !== "signed")
      throw data({ ok: false, message: "Sign the exam before issuing a prescription from it." }, { status: 409 });
    const finals = await tx
      .select()
      .from(examRefractions)
      .where(and(eq(examRefractions.examId, exam.id), eq(examRefractions.kind, "final")));
    if (!finals.length)
      throw data({ ok: false, message: "The exam has no final refraction to prescribe from." }, { status: 409 });
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
        lensName: input.kind === "contact_lens" ? (input.lensName ?? "") : null,
      })
      .returning({ id: prescriptions.id });
    for (const f of finals) {
      const spectacle = { sphere: f.sphere, cylinder: f.cylinder, axis: f.axis };
      if (input.kind === "spectacle") {
        await tx.insert(prescriptionEyes).values({
          prescriptionId: rx!.id,
          eye: f.eye,
          ...spectacle,
          addPower: f.addPower,
          prismDioptres: f.prismDioptres,
          prismBase: f.prismBase,
          vertexMm: f.vertexMm ?? DEFAULT_VERTEX_MM,
        });
      } else {
        const { exact, rounded } = contactLensPower(spectacle, f.vertexMm ?? DEFAULT_VERTEX_MM);
        await tx.insert(prescriptionEyes).values({
          prescriptionId: rx!.id,
          eye: f.eye,
          ...rounded,
          addPower: f.addPower,
          vertexMm: 0,
          exactSphere: exact.sphere,
          exactCylinder: exact.cylinder,
          exactAxis: exact.axis,
          spectacleSphere: f.sphere,
          spectacleCylinder: f.cylinder,
          spectacleAxis: f.axis,
          baseCurveMm: input.baseCurveMm ?? null,
          diameterMm: input.diameterMm ?? null,
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
