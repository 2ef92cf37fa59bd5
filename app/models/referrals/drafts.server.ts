/** Drafting referrals: the exams one may be drafted from, creating, editing and discarding drafts, loading one. */
import { and, asc, desc, eq, inArray, sql } from "drizzle-orm";
import {
  documents,
  exams,
  patients,
  referralAttachments,
  referralEvents,
  referralRecipients,
  referrals,
  users,
  type ReferralSnapshot,
} from "~/db/schema";
import {
  ACUITY_REDUCED_LOGMAR,
  BLIND_SPOT_TOLERANCE,
  IOP_ASYMMETRY_MMHG,
  IOP_UPPER_NORMAL_MMHG,
  NORMAL_BLIND_SPOT,
} from "~/lib/optics";
import { findingKey, URGENCY_LABEL, urgencyOverrideProblem, type Urgency } from "~/lib/referrals";
import { examTriage } from "~/models/exams/triage.server";
import { loadExam, promptsFor } from "~/models/exams/exam.server";
import { audit } from "~/utils/audit.server";
import { db, type Tx } from "~/utils/db.server";
import type { SessionUser } from "~/utils/session.server";
import { ReferralError, isUuid } from "./common.server";
import { notFound } from "~/utils/failure.server";
import { snapshotOf, triageLines } from "./snapshot.server";

/**
 * Signed exams with referral prompts that have no referral yet: the candidates on /referrals/new.
 * A query with the engine's thresholds narrows the exams; the engine then decides, so the list
 * shows exactly its prompts. (A drop in acuity since the previous visit is not looked for here:
 * refer those from the exam itself.)
 */
export async function candidateExams(limit = 20) {
  const n = NORMAL_BLIND_SPOT;
  const tol = BLIND_SPOT_TOLERANCE;
  const rows = await db
    .select({
      id: exams.id,
      patientId: exams.patientId,
      examinedAt: exams.examinedAt,
      signedAt: exams.signedAt,
      triage: exams.triage,
      firstName: patients.firstName,
      lastName: patients.lastName,
      dateOfBirth: patients.dateOfBirth,
    })
    .from(exams)
    .innerJoin(patients, eq(patients.id, exams.patientId))
    .where(
      and(
        eq(exams.status, "signed"),
        sql`not exists (select 1 from ${referrals} r where r.exam_id = ${exams.id} and r.status <> 'withdrawn')`,
        sql`(
          (${exams.triage} ->> 'urgency') is not null
          or exists (select 1 from exam_iop i where i.exam_id = ${exams.id} and i.mm_hg > ${IOP_UPPER_NORMAL_MMHG})
          or (select max(i.mm_hg) - min(i.mm_hg) from exam_iop i where i.exam_id = ${exams.id}) >= ${IOP_ASYMMETRY_MMHG}
          or exists (select 1 from exam_visual_fields f where f.exam_id = ${exams.id} and (f.defect_present
               or f.blind_spot_width_deg > ${n.widthDeg + tol.sizeDeg} or f.blind_spot_height_deg > ${n.heightDeg + tol.sizeDeg}
               or abs(f.blind_spot_x_deg - ${n.centreXDeg}) > ${tol.centreDeg} or abs(f.blind_spot_y_deg - ${n.centreYDeg}) > ${tol.centreDeg}))
          or exists (select 1 from exam_colour_vision c where c.exam_id = ${exams.id} and c.result <> 'normal')
          or exists (select 1 from exam_acuity a where a.exam_id = ${exams.id} and a.distance = 'distance' and a.correction = 'best' and a.eye <> 'both' and a.log_mar > ${ACUITY_REDUCED_LOGMAR - 0.02})
        )`,
      ),
    )
    .orderBy(desc(exams.signedAt))
    .limit(limit * 3);
  const out: ((typeof rows)[number] & { prompts: string[] })[] = [];
  for (const row of rows) {
    if (out.length >= limit) break;
    const s = await loadExam(row.id);
    // Requests to repeat a measurement are not reasons to refer: only prompts to consider referral and triage's reasons count.
    const prompts = (await promptsFor(row.patientId, { id: row.id, examinedAt: row.examinedAt }, s)).filter(
      (p) => p.action === "consider referral",
    );
    // The proposal stored at the exam's last save; computed now for exams saved before triage was stored.
    const triaged = row.triage ?? (await examTriage(row.id).catch(() => null))?.result ?? null;
    const reasons = triageLines(triaged).map((t) => `${URGENCY_LABEL[t.urgency] ?? t.urgency}: ${t.text}`);
    if (prompts.length || reasons.length) out.push({ ...row, prompts: [...reasons, ...prompts.map((p) => p.message)] });
  }
  return out;
}

// ------------------------------------------------------------------------------- drafts

export type DraftValues = {
  recipientId: string | null;
  urgency: Urgency;
  /** Why a lower urgency than triage proposed was chosen (required then, ignored otherwise). */
  urgencyOverrideReason: string;
  reason: string;
  body: string;
  relevantHistory: string;
  additionalFindings: string;
  selectedFindings: string[];
  attachmentIds: string[];
};

async function checkDraftRefs(
  tx: Tx,
  patientId: string,
  snapshot: ReferralSnapshot,
  v: DraftValues,
  proposed: Urgency | null,
) {
  const errors: Record<string, string[]> = {};
  const override = urgencyOverrideProblem(v.urgency, proposed, v.urgencyOverrideReason);
  if (override) errors.urgencyOverrideReason = [override];
  if (v.recipientId) {
    const [r] = await tx
      .select({ id: referralRecipients.id, active: referralRecipients.active })
      .from(referralRecipients)
      .where(eq(referralRecipients.id, v.recipientId));
    if (!r || !r.active) errors.recipientId = ["Choose a recipient from the directory."];
  }
  const known = new Set(snapshot.prompts.map(findingKey));
  if (v.selectedFindings.some((k) => !known.has(k)))
    errors.selectedFindings = ["A chosen finding is not one of this exam's findings."];
  if (v.attachmentIds.length) {
    const docs = await tx
      .select({ id: documents.id })
      .from(documents)
      .where(and(inArray(documents.id, v.attachmentIds), eq(documents.patientId, patientId)));
    if (docs.length !== new Set(v.attachmentIds).size)
      errors.attachmentIds = ["An enclosure is not one of this patient's uploads."];
  }
  if (Object.keys(errors).length) throw ReferralError.inFields(errors);
}

async function writeAttachments(tx: Tx, referralId: string, ids: string[]) {
  await tx.delete(referralAttachments).where(eq(referralAttachments.referralId, referralId));
  const unique = [...new Set(ids)];
  if (unique.length)
    await tx
      .insert(referralAttachments)
      .values(unique.map((documentId, position) => ({ referralId, documentId, position })));
}

/** The exam a referral may be drafted from: a signed one (see the README's policy). */
export async function referableExam(examId: string | null | undefined) {
  if (!isUuid(examId)) notFound();
  const [exam] = await db.select().from(exams).where(eq(exams.id, examId)).limit(1);
  if (!exam) notFound();
  return exam;
}

export async function createDraft(user: SessionUser, examId: string, v: DraftValues, request: Request) {
  const exam = await referableExam(examId);
  if (exam.status !== "signed")
    throw new ReferralError("This exam is not signed yet. Sign it first: a referral carries only signed findings.", {
      status: 409,
    });
  const snapshot = await snapshotOf(exam);
  const proposed = (snapshot.triage?.urgency ?? null) as Urgency | null;
  const { urgencyOverrideReason, ...values } = v;
  return db.transaction(async (tx) => {
    await checkDraftRefs(tx, exam.patientId, snapshot, v, proposed);
    const [row] = await tx
      .insert(referrals)
      .values({
        patientId: exam.patientId,
        examId: exam.id,
        createdById: user.id,
        recipientId: values.recipientId,
        urgency: values.urgency,
        proposedUrgency: proposed,
        urgencyOverrideReason: urgencyOverrideProblem(values.urgency, proposed, "")
          ? urgencyOverrideReason.trim()
          : null,
        reason: values.reason,
        body: values.body,
        relevantHistory: values.relevantHistory,
        additionalFindings: values.additionalFindings,
        selectedFindings: values.selectedFindings,
        snapshot,
      })
      .returning({ id: referrals.id });
    await writeAttachments(tx, row!.id, v.attachmentIds);
    await tx.insert(referralEvents).values({ referralId: row!.id, kind: "drafted", actorUserId: user.id });
    await audit(
      {
        action: "referral.drafted",
        actorUserId: user.id,
        entityType: "referral",
        entityId: row!.id,
        patientId: exam.patientId,
        request,
      },
      tx,
    );
    return row!.id;
  });
}

export async function updateDraft(user: SessionUser, referralId: string, v: DraftValues, request: Request) {
  await db.transaction(async (tx) => {
    const [r] = await tx.select().from(referrals).where(eq(referrals.id, referralId)).for("update");
    if (!r) notFound();
    if (r.status !== "draft")
      throw new ReferralError("This letter has been sent and can no longer be edited.", { status: 409 });
    const proposed = r.proposedUrgency;
    await checkDraftRefs(tx, r.patientId, r.snapshot, v, proposed);
    const { attachmentIds, urgencyOverrideReason, ...values } = v;
    const below = urgencyOverrideProblem(values.urgency, proposed, "") !== null;
    await tx
      .update(referrals)
      .set({ ...values, urgencyOverrideReason: below ? urgencyOverrideReason.trim() : null, updatedAt: new Date() })
      .where(eq(referrals.id, referralId));
    await writeAttachments(tx, referralId, attachmentIds);
    await audit(
      {
        action: "referral.edited",
        actorUserId: user.id,
        entityType: "referral",
        entityId: referralId,
        patientId: r.patientId,
        request,
      },
      tx,
    );
  });
}

export async function discardDraft(user: SessionUser, referralId: string, request: Request) {
  await db.transaction(async (tx) => {
    const [r] = await tx.select().from(referrals).where(eq(referrals.id, referralId)).for("update");
    if (!r) notFound();
    if (r.status !== "draft")
      throw new ReferralError("Only a draft can be discarded; withdraw a sent referral instead.", { status: 409 });
    await tx.delete(referrals).where(eq(referrals.id, referralId));
    await audit(
      {
        action: "referral.discarded",
        actorUserId: user.id,
        entityType: "referral",
        entityId: referralId,
        patientId: r.patientId,
        request,
      },
      tx,
    );
  });
}

// ------------------------------------------------------------------------------- loading

export async function loadReferral(referralId: string | undefined) {
  if (!isUuid(referralId)) notFound();
  const [row] = await db
    .select({
      referral: referrals,
      patient: {
        id: patients.id,
        firstName: patients.firstName,
        lastName: patients.lastName,
        dateOfBirth: patients.dateOfBirth,
        sex: patients.sex,
        addressLine1: patients.addressLine1,
        city: patients.city,
        postcode: patients.postcode,
      },
      author: {
        id: users.id,
        name: users.name,
        email: users.email,
        licenceNumber: users.licenceNumber,
        role: users.role,
      },
      examStatus: exams.status,
    })
    .from(referrals)
    .innerJoin(patients, eq(patients.id, referrals.patientId))
    .innerJoin(users, eq(users.id, referrals.createdById))
    .innerJoin(exams, eq(exams.id, referrals.examId))
    .where(eq(referrals.id, referralId))
    .limit(1);
  if (!row) notFound();
  const recipient = row.referral.recipientId
    ? ((await db.select().from(referralRecipients).where(eq(referralRecipients.id, row.referral.recipientId)))[0] ??
      null)
    : null;
  const attachments = await db
    .select({
      id: documents.id,
      kind: documents.kind,
      description: documents.description,
      originalName: documents.originalName,
      contentType: documents.contentType,
      storageKey: documents.storageKey,
      sizeBytes: documents.sizeBytes,
    })
    .from(referralAttachments)
    .innerJoin(documents, eq(documents.id, referralAttachments.documentId))
    .where(eq(referralAttachments.referralId, row.referral.id))
    .orderBy(asc(referralAttachments.position));
  return { ...row, recipient, attachments };
}
export type LoadedReferral = Awaited<ReturnType<typeof loadReferral>>;
