/**
 * Referrals on the server: building a draft from a signed exam, the letter PDF's content,
 * queueing and delivering the e-mails (pg-boss, retried, each message sent at most once),
 * the recipient's actions through the signed link, and the lists for tracking and the chart.
 */
import { and, asc, desc, eq, inArray, isNull, sql } from "drizzle-orm";
import nodemailer from "nodemailer";
import { data } from "react-router";
import {
  documents,
  examAnteriorChamber,
  examDilations,
  examDiscs,
  examFundus,
  examIop,
  examPupils,
  examRedFlags,
  exams,
  patients,
  practiceSettings,
  referralAttachments,
  referralEvents,
  referralLinks,
  referralMessages,
  referralRecipients,
  referralReplies,
  referrals,
  users,
  type ReferralSnapshot,
} from "~/db/schema";
import {
  ACUITY_CORRECTION_LABEL,
  COLOUR_RESULTS,
  COLOUR_TESTS,
  FIELD_METHODS,
  IOP_METHODS,
  REFRACTION_LABEL,
  RELIABILITY,
  type RefractionKind,
} from "~/lib/exam/sections";
import {
  ACUITY_REDUCED_LOGMAR,
  BLIND_SPOT_TOLERANCE,
  formatRx,
  IOP_ASYMMETRY_MMHG,
  IOP_UPPER_NORMAL_MMHG,
  NORMAL_BLIND_SPOT,
} from "~/lib/optics";
import {
  canChase,
  describeTimeFrame,
  displayStatus,
  dueBy,
  findingKey,
  localDate,
  promptValue,
  sendProblems,
  timeFramesOf,
  URGENCY_LABEL,
  urgencyOverrideProblem,
  type Urgency,
} from "~/lib/referrals";
import { examTriage } from "~/models/exams/triage.server";
import { loadExam, promptsFor } from "~/models/exams/exam.server";
import { audit } from "~/utils/audit.server";
import { db, type Tx } from "~/utils/db.server";
import { env } from "~/utils/env.server";
import { defineJob } from "~/utils/jobs.server";
import { absoluteUrl, sendMail, type Mail } from "~/utils/mail.server";
import type { SessionUser } from "~/utils/session.server";
import { storage, StorageUnavailableError } from "~/utils/storage.server";
import { buildLetterPdf, type LetterInput } from "./letter-pdf.server";
import { issueLink, signLink } from "./links.server";

export const UUID_RE = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;
export const isUuid = (v: string | null | undefined): v is string => !!v && UUID_RE.test(v);
const notFound = () => data({ error: "Not found." }, { status: 404 });

/** A short reference for letters and e-mails (never the patient's name in a subject line). */
export const referenceOf = (id: string) => `R-${id.slice(0, 8).toUpperCase()}`;

export class ReferralError extends Error {
  constructor(
    readonly errors: Record<string, string[]>,
    readonly status = 400,
  ) {
    super(Object.values(errors).flat().join(" "));
  }
}

// ------------------------------------------------------------------------------- settings

export async function practice() {
  const [p] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
  if (!p) throw data({ error: "Practice settings are missing; run the seed." }, { status: 500 });
  return p;
}

export function formatDate(
  at: Date | string,
  timeZone: string,
  opts: Intl.DateTimeFormatOptions = { day: "numeric", month: "long", year: "numeric" },
) {
  const d = typeof at === "string" ? new Date(`${at}T12:00:00Z`) : at;
  return new Intl.DateTimeFormat("en-GB", { timeZone: typeof at === "string" ? "UTC" : timeZone, ...opts }).format(d);
}

// ------------------------------------------------------------------------------- the exam

const EYE_WORD = { right: "Right", left: "Left", both: "Both" } as const;

/**
 * What the letter carries beyond the stored exam snapshot: the previous visit's pressures and
 * the patient's details as they were when the draft was made (kept in the same jsonb column).
 */
export type LetterSnapshot = ReferralSnapshot & {
  previousIop?: { examinedAt: string; eye: "right" | "left"; mmHg: number; method: string; time: string }[];
  patientDetails?: {
    phone: string | null;
    allergies: string;
    medications: string;
    noKnownAllergies: boolean | null;
    gp: string;
  };
};

const CELLS_WORDS: Record<string, string> = {
  none: "none",
  trace: "trace",
  "1+": "1+",
  "2+": "2+",
  "3+": "3+",
  "4+": "4+",
};
const DRUG_WORDS: Record<string, string> = {
  tropicamide: "Tropicamide",
  phenylephrine: "Phenylephrine",
  cyclopentolate: "Cyclopentolate",
  other: "Other",
};

/** The structured findings of an exam (red flags, pupils, anterior chamber, disc, fundus, dilation) for the snapshot. */
async function findingsOf(examId: string) {
  const byEye = <T extends { eye: string }>(rows: T[]) =>
    [...rows].sort((a, b) => (a.eye === b.eye ? 0 : a.eye === "right" ? -1 : 1));
  const [flags, pupils, ac, discs, fundus, dilations] = await Promise.all([
    db.select().from(examRedFlags).where(eq(examRedFlags.examId, examId)),
    db.select().from(examPupils).where(eq(examPupils.examId, examId)),
    db.select().from(examAnteriorChamber).where(eq(examAnteriorChamber.examId, examId)),
    db.select().from(examDiscs).where(eq(examDiscs.examId, examId)),
    db.select().from(examFundus).where(eq(examFundus.examId, examId)),
    db.select().from(examDilations).where(eq(examDilations.examId, examId)).orderBy(asc(examDilations.instilledAt)),
  ]);
  const f = flags[0];
  return {
    redFlags: f
      ? {
          flashes: f.flashes,
          newFloaters: f.newFloaters,
          curtain: f.curtain,
          suddenLoss: f.suddenLoss,
          severePain: f.severePain,
          redEye: f.redEye,
          distortion: f.distortion,
          newDiplopia: f.newDiplopia,
          gcaSymptoms: f.gcaSymptoms,
          headache: f.headache,
          notes: f.notes,
        }
      : null,
    pupils: byEye(pupils).map((r) => ({
      eye: r.eye,
      equalReactive: r.equalReactive,
      rapd: r.rapd,
      larger: r.larger,
      sizeMm: r.sizeMm,
      notes: r.notes,
    })),
    anteriorChamber: byEye(ac).map((r) => ({
      eye: r.eye,
      vanHerick: r.vanHerick,
      cells: r.cells ? (CELLS_WORDS[r.cells] ?? r.cells) : null,
      hyphaema: r.hyphaema,
      hypopyon: r.hypopyon,
      notes: r.notes,
    })),
    discs: byEye(discs).map((r) => ({
      eye: r.eye,
      verticalCd: r.verticalCd,
      margins: r.margins,
      swelling: r.swelling,
      haemorrhage: r.haemorrhage,
      pallor: r.pallor,
      notes: r.notes,
    })),
    fundus: byEye(fundus).map((r) => ({
      eye: r.eye,
      vitreousDetachment: r.vitreousDetachment,
      vitreousPigment: r.vitreousPigment,
      retinalBreak: r.retinalBreak,
      retinalDetachment: r.retinalDetachment,
      drusen: r.drusen,
      suspectedWetAmd: r.suspectedWetAmd,
      maculaNotes: r.maculaNotes,
      peripheryNotes: r.peripheryNotes,
    })),
    dilations: dilations.map((d) => ({
      drug: d.drug === "other" ? d.otherDrug || "Other" : (DRUG_WORDS[d.drug] ?? d.drug),
      strengthPercent: d.strengthPercent,
      eye: d.eye,
      instilledAt: d.instilledAt.toISOString(),
    })),
  };
}

/** The GP as one line: name, practice, address and telephone, as recorded. */
export function gpLine(p: { gpName: string; gpPractice: string; gpAddress: string; gpPhone: string }): string {
  return [p.gpName.trim(), p.gpPractice.trim(), p.gpAddress.trim(), p.gpPhone.trim() && `Tel ${p.gpPhone.trim()}`]
    .filter(Boolean)
    .join(", ");
}

/** The signed exam's measured values, as the letter will carry them. */
export async function snapshotOf(exam: typeof exams.$inferSelect): Promise<LetterSnapshot> {
  const s = await loadExam(exam.id);
  const prompts = await promptsFor(exam.patientId, exam, s);
  const [examiner] = await db.select({ name: users.name }).from(users).where(eq(users.id, exam.optometristId));
  // The current refraction: the final one, else the subjective, else the habitual spectacles.
  const kinds: RefractionKind[] = ["final", "subjective", "cycloplegic", "retinoscopy", "autorefraction", "habitual"];
  const kind = kinds.find((k) => s.refractions.some((r) => r.kind === k));
  const refraction = kind
    ? s.refractions
        .filter((r) => r.kind === kind)
        .sort((a, b) => (a.eye === b.eye ? 0 : a.eye === "right" ? -1 : 1))
        .map((r) => ({
          kind: REFRACTION_LABEL[r.kind],
          eye: r.eye,
          text: formatRx({ sphere: r.sphere, cylinder: r.cylinder, axis: r.axis }),
          add: r.addPower,
          prism: r.prismDioptres !== null && r.prismBase ? `${r.prismDioptres} Δ base ${r.prismBase}` : null,
          va: r.vaNotation,
        }))
    : [];
  const order = { right: 0, left: 1, both: 2 } as const;
  const [extras, triaged, [patientRow], [previous]] = await Promise.all([
    findingsOf(exam.id),
    examTriage(exam.id).catch(() => null),
    db.select().from(patients).where(eq(patients.id, exam.patientId)),
    db
      .select({ id: exams.id, examinedAt: exams.examinedAt })
      .from(exams)
      .where(
        and(
          eq(exams.patientId, exam.patientId),
          eq(exams.status, "signed"),
          sql`${exams.examinedAt} < ${exam.examinedAt}`,
        ),
      )
      .orderBy(desc(exams.examinedAt))
      .limit(1),
  ]);
  const previousIop = previous ? await db.select().from(examIop).where(eq(examIop.examId, previous.id)) : [];
  return {
    ...extras,
    cornealThickness: [...s.cct]
      .sort((a, b) => order[a.eye] - order[b.eye])
      .map((c) => ({ eye: c.eye, micrometres: c.micrometres })),
    triage: triaged
      ? {
          urgency: triaged.result.urgency,
          reasons: triaged.result.reasons.map((r) => ({
            urgency: r.urgency,
            eye: r.eye,
            rule: r.rule,
            source: r.source,
          })),
        }
      : null,
    previousIop: previous
      ? [...previousIop]
          .sort((a, b) => order[a.eye] - order[b.eye] || a.reading - b.reading)
          .map((r) => ({
            examinedAt: previous.examinedAt.toISOString(),
            eye: r.eye,
            mmHg: r.mmHg,
            method: IOP_METHODS[r.method] ?? r.method,
            time: r.measuredTime.slice(0, 5),
          }))
      : [],
    patientDetails: patientRow
      ? {
          phone: patientRow.phone?.trim() || null,
          allergies: patientRow.allergies,
          medications: patientRow.medications,
          noKnownAllergies: patientRow.noKnownAllergies,
          gp: gpLine(patientRow),
        }
      : undefined,
    examinedAt: exam.examinedAt.toISOString(),
    signedAt: exam.signedAt?.toISOString() ?? null,
    examiner: examiner?.name ?? "",
    history: s.history
      ? {
          reason: s.history.reason,
          symptoms: s.history.symptoms,
          ocularHistory: s.history.ocularHistory,
          generalHistory: s.history.generalHistory,
          medications: s.history.medications,
          familyHistory: s.history.familyHistory,
        }
      : null,
    acuity: [...s.acuity]
      .sort(
        (a, b) =>
          a.distance.localeCompare(b.distance) ||
          order[a.eye] - order[b.eye] ||
          a.correction.localeCompare(b.correction),
      )
      .map((a) => ({
        eye: a.eye,
        distance: a.distance,
        correction: a.correction,
        notation: a.notation,
        logMar: a.logMar,
      })),
    refraction,
    iop: [...s.iop]
      .sort((a, b) => order[a.eye] - order[b.eye] || a.reading - b.reading)
      .map((r) => ({
        eye: r.eye,
        mmHg: r.mmHg,
        method: IOP_METHODS[r.method] ?? r.method,
        time: r.measuredTime.slice(0, 5),
        reading: r.reading,
      })),
    colour: [...s.colour]
      .sort((a, b) => order[a.eye] - order[b.eye])
      .map((r) => ({
        eye: r.eye,
        test: COLOUR_TESTS[r.test] ?? r.test,
        platesCorrect: r.platesCorrect,
        platesShown: r.platesShown,
        result: COLOUR_RESULTS[r.result] ?? r.result,
        notes: r.notes,
      })),
    fields: [...s.fields]
      .sort((a, b) => order[a.eye] - order[b.eye])
      .map((r) => ({
        eye: r.eye,
        method: (FIELD_METHODS[r.method] ?? r.method).replace(/ \(.*\)$/, ""),
        blindSpot:
          r.blindSpotXDeg !== null &&
          r.blindSpotYDeg !== null &&
          r.blindSpotWidthDeg !== null &&
          r.blindSpotHeightDeg !== null
            ? {
                xDeg: r.blindSpotXDeg,
                yDeg: r.blindSpotYDeg,
                widthDeg: r.blindSpotWidthDeg,
                heightDeg: r.blindSpotHeightDeg,
              }
            : null,
        defectPresent: r.defectPresent,
        defects: r.defects,
        reliability: r.reliability ? (RELIABILITY[r.reliability] ?? r.reliability) : null,
      })),
    diagnoses: s.diagnoses.map((d) => ({ code: d.code, label: d.label, eye: d.eye })),
    prompts: prompts.map((p) => ({
      code: p.code,
      eye: p.eye,
      message: p.message,
      value: p.value,
      rule: p.rule,
      source: p.source,
    })),
  };
}

const EYE_PHRASE: Record<string, string> = { R: "right eye", L: "left eye", both: "both eyes" };

/** Triage reasons in plain words for the letter and the form: "Right eye: retinal detachment". */
export function triageLines(t: ReferralSnapshot["triage"]): { urgency: Urgency; text: string }[] {
  return (t?.reasons ?? []).map((r) => {
    const where = r.eye ? EYE_PHRASE[r.eye] : "";
    // "Retinal detachment" reads on after a colon as "retinal detachment"; "IOP …" keeps its capitals.
    const rule = /^[A-Z][a-z]/.test(r.rule) ? r.rule.charAt(0).toLowerCase() + r.rule.slice(1) : r.rule;
    return {
      urgency: r.urgency as Urgency,
      text: where ? `${where.charAt(0).toUpperCase()}${where.slice(1)}: ${rule}` : r.rule,
    };
  });
}

/** Triage's proposal for the form: the urgency (the stored one on a draft) and its reasons in plain words with their sources. */
export function triageProposal(snapshot: ReferralSnapshot, stored?: Urgency | null) {
  const lines = triageLines(snapshot.triage);
  const urgency = (stored !== undefined ? stored : (snapshot.triage?.urgency ?? null)) as Urgency | null;
  return {
    urgency,
    reasons: lines.map((l, i) => ({ urgency: l.urgency, text: l.text, source: snapshot.triage!.reasons[i]!.source })),
  };
}

/** The pre-filled letter text from the snapshot. */
export function prefill(
  snapshot: ReferralSnapshot,
  patient: { firstName: string; lastName: string; medications?: string; allergies?: string },
) {
  const h = snapshot.history;
  // The exam's history first; the chart's medications and allergies when the exam has none.
  const history = [
    h?.reason && `Reason for visit: ${h.reason}`,
    h?.symptoms && `Symptoms: ${h.symptoms}`,
    h?.ocularHistory && `Ocular history: ${h.ocularHistory}`,
    h?.generalHistory && `General health: ${h.generalHistory}`,
    (h?.medications || patient.medications) && `Medications: ${h?.medications || patient.medications}`,
    patient.allergies && `Allergies: ${patient.allergies}`,
    h?.familyHistory && `Family history: ${h.familyHistory}`,
  ]
    .filter(Boolean)
    .join("\n");
  const triaged = triageLines(snapshot.triage);
  const reason = (
    triaged.length
      ? triaged.map((t) => t.text)
      : snapshot.prompts.filter((p) => p.code !== "IOP_REPEAT").map((p) => p.message)
  )
    .join("; ")
    .slice(0, 600);
  const body = `Thank you for seeing ${patient.firstName} ${patient.lastName}, whom I examined on ${formatDate(new Date(snapshot.examinedAt), "UTC")}. The findings that prompted this referral and the measurements of the exam are set out below. I would be grateful for your assessment and advice on management.`;
  // Triage proposes the urgency; with no proposal the letter starts as routine.
  const proposed = (snapshot.triage?.urgency ?? null) as Urgency | null;
  const urgency: Urgency = proposed ?? "routine";
  // Requests to repeat a measurement are not findings to refer on; they start unticked.
  return {
    history,
    reason,
    body,
    urgency,
    proposedUrgency: proposed,
    selectedFindings: snapshot.prompts.filter((p) => p.code !== "IOP_REPEAT").map(findingKey),
  };
}

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
  if (Object.keys(errors).length) throw new ReferralError(errors);
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
  if (!isUuid(examId)) throw notFound();
  const [exam] = await db.select().from(exams).where(eq(exams.id, examId)).limit(1);
  if (!exam) throw notFound();
  return exam;
}

export async function createDraft(user: SessionUser, examId: string, v: DraftValues, request: Request) {
  const exam = await referableExam(examId);
  if (exam.status !== "signed")
    throw new ReferralError(
      { "": ["This exam is not signed yet. Sign it first: a referral carries only signed findings."] },
      409,
    );
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
    if (!r) throw notFound();
    if (r.status !== "draft")
      throw new ReferralError({ "": ["This letter has been sent and can no longer be edited."] }, 409);
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
    if (!r) throw notFound();
    if (r.status !== "draft")
      throw new ReferralError({ "": ["Only a draft can be discarded; withdraw a sent referral instead."] }, 409);
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
  if (!isUuid(referralId)) throw notFound();
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
  if (!row) throw notFound();
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

const SEX = { female: "Female", male: "Male", other: "Other", unknown: "Not recorded" } as const;

/** Allergies as the letter states them: the recorded text, "None known" when so recorded, else "Not recorded". */
export function allergyLine(d: LetterSnapshot["patientDetails"]): string {
  const text = d?.allergies?.trim() ?? "";
  if (text) return /^(none( known)?|nka|nkda|no known( drug)? allergies)\.?$/i.test(text) ? "None known" : text;
  return d?.noKnownAllergies ? "None known" : "Not recorded";
}

/** The letter's content from the stored referral (the snapshot, the edited text, the people). */
export async function letterInput(
  r: LoadedReferral,
  opts: { withAttachmentBytes?: boolean } = {},
): Promise<LetterInput> {
  const p = await practice();
  const tz = p.timeZone;
  const s = r.referral.snapshot as LetterSnapshot;
  const selected = new Set(r.referral.selectedFindings);
  const yes = (b: boolean | null | undefined, word: string) => (b ? word : "");
  const frames = timeFramesOf(p);
  const days = r.referral.timeFrameDays ?? frames[r.referral.urgency];
  const fmt = (n: number) => String(n);
  const measurements: LetterInput["measurements"] = [];
  if (s.acuity.length)
    measurements.push({
      title: "Visual acuity",
      columns: ["Eye", "Distance", "Correction", "VA as recorded", "logMAR"],
      widths: [1, 1, 1.6, 1.4, 1],
      rows: s.acuity.map((a) => [
        EYE_WORD[a.eye],
        a.distance === "distance" ? "Distance" : "Near",
        ACUITY_CORRECTION_LABEL[a.correction],
        a.notation,
        a.logMar.toFixed(2),
      ]),
    });
  if (s.refraction.length)
    measurements.push({
      title: `Current refraction (${s.refraction[0]!.kind})`,
      columns: ["Eye", "Sphere / cylinder / axis", "Add", "Prism", "VA"],
      widths: [0.8, 2.2, 0.8, 1.4, 1],
      rows: s.refraction.map((x) => [
        EYE_WORD[x.eye],
        x.text,
        x.add !== null ? `+${x.add.toFixed(2)}` : "—",
        x.prism ?? "—",
        x.va ?? "—",
      ]),
    });
  if (s.iop.length) {
    // Each eye's mean of this visit's readings, then every reading with its method and time.
    const meanOf = (eye: "right" | "left") => {
      const xs = s.iop.filter((i) => i.eye === eye).map((i) => i.mmHg);
      return xs.length > 1
        ? ` (mean of ${xs.length}: ${(Math.round((xs.reduce((a, b) => a + b, 0) / xs.length) * 10) / 10).toString()} mmHg)`
        : "";
    };
    measurements.push({
      title: `Intraocular pressure at this exam${meanOf("right") ? `; right${meanOf("right")}` : ""}${meanOf("left") ? `; left${meanOf("left")}` : ""}`,
      columns: ["Eye", "Reading", "IOP", "Method", "Time"],
      widths: [0.8, 0.8, 1, 2, 1],
      rows: s.iop.map((i, k) => [EYE_WORD[i.eye], String(i.reading ?? k + 1), `${fmt(i.mmHg)} mmHg`, i.method, i.time]),
    });
  }
  if (s.previousIop?.length)
    measurements.push({
      title: `Intraocular pressure at the previous exam (${formatDate(new Date(s.previousIop[0]!.examinedAt), tz)})`,
      columns: ["Eye", "IOP", "Method", "Time"],
      widths: [0.8, 1, 2, 1],
      rows: s.previousIop.map((i) => [EYE_WORD[i.eye], `${fmt(i.mmHg)} mmHg`, i.method, i.time]),
    });
  else if (s.iop.length)
    measurements.push({
      title: "Intraocular pressure at the previous exam",
      columns: ["Previous values"],
      widths: [1],
      rows: [["No earlier pressures on record at this practice"]],
    });
  if (s.cornealThickness?.length)
    measurements.push({
      title: "Central corneal thickness",
      columns: ["Eye", "Thickness"],
      widths: [0.8, 1.5],
      rows: s.cornealThickness.map((c) => [EYE_WORD[c.eye], `${c.micrometres} µm`]),
    });
  if (s.pupils?.length)
    measurements.push({
      title: "Pupils",
      columns: ["Eye", "Equal and reactive", "RAPD", "Anisocoria", "Size", "Notes"],
      widths: [0.8, 1.2, 0.8, 1.4, 0.7, 2],
      rows: s.pupils.map((p) => [
        EYE_WORD[p.eye],
        p.equalReactive ? "Yes" : "No",
        p.rapd ? "Present" : "None",
        p.larger ? "This pupil larger" : "—",
        p.sizeMm !== null ? `${fmt(p.sizeMm)} mm` : "—",
        p.notes || "—",
      ]),
    });
  if (s.anteriorChamber?.length)
    measurements.push({
      title: "Anterior chamber",
      columns: ["Eye", "Van Herick grade", "Cells", "Hyphaema", "Hypopyon", "Notes"],
      widths: [0.8, 1.1, 0.8, 0.9, 0.9, 2],
      rows: s.anteriorChamber.map((a) => [
        EYE_WORD[a.eye],
        a.vanHerick !== null ? String(a.vanHerick) : "—",
        a.cells ?? "—",
        a.hyphaema ? "Present" : "None",
        a.hypopyon ? "Present" : "None",
        a.notes || "—",
      ]),
    });
  if (s.discs?.length)
    measurements.push({
      title: "Optic disc",
      columns: ["Eye", "Vertical C/D", "Margins", "Swelling", "Haemorrhage", "Pallor", "Notes"],
      widths: [0.8, 0.9, 0.9, 0.8, 1, 0.7, 1.9],
      rows: s.discs.map((d) => [
        EYE_WORD[d.eye],
        d.verticalCd !== null ? d.verticalCd.toFixed(2) : "—",
        d.margins ?? "—",
        d.swelling ? "Present" : "None",
        d.haemorrhage ? "Present" : "None",
        d.pallor ? "Present" : "None",
        d.notes || "—",
      ]),
    });
  if (s.fundus?.length)
    measurements.push({
      title: "Fundus: vitreous, macula and periphery",
      columns: ["Eye", "Findings", "Macula", "Periphery"],
      widths: [0.8, 2.6, 1.6, 1.6],
      rows: s.fundus.map((f) => [
        EYE_WORD[f.eye],
        [
          yes(f.vitreousDetachment, "posterior vitreous detachment"),
          yes(f.vitreousPigment, "pigment in the anterior vitreous"),
          yes(f.retinalBreak, "retinal break"),
          yes(f.retinalDetachment, "retinal detachment"),
          yes(f.drusen, "drusen"),
          yes(f.suspectedWetAmd, "suspected wet AMD"),
        ]
          .filter(Boolean)
          .join(", ") || "None of those listed",
        f.maculaNotes || "—",
        f.peripheryNotes || "—",
      ]),
    });
  if (s.dilations?.length)
    measurements.push({
      title: "Dilation",
      columns: ["Drug", "Strength", "Eye", "Instilled"],
      widths: [1.6, 0.8, 0.8, 1.6],
      rows: s.dilations.map((d) => [
        d.drug,
        `${fmt(d.strengthPercent)}%`,
        EYE_WORD[d.eye as "both"] ?? d.eye,
        formatDate(new Date(d.instilledAt), tz, {
          day: "numeric",
          month: "short",
          year: "numeric",
          hour: "2-digit",
          minute: "2-digit",
        }),
      ]),
    });
  if (s.colour.length)
    measurements.push({
      title: "Colour vision",
      columns: ["Eye", "Test", "Plates read", "Result", "Notes"],
      widths: [0.8, 2.2, 1, 1.2, 1.6],
      rows: s.colour.map((c) => [
        EYE_WORD[c.eye],
        c.test,
        c.platesShown !== null ? `${c.platesCorrect ?? "—"} of ${c.platesShown}` : "—",
        c.result,
        c.notes || "—",
      ]),
    });
  if (s.fields.length)
    measurements.push({
      title: "Visual fields and blind spot",
      columns: ["Eye", "Method", "Blind-spot centre (x, y)", "Blind-spot size (w × h)", "Defect", "Reliability"],
      widths: [0.8, 1.9, 1.5, 1.4, 1.6, 1],
      rows: s.fields.map((f) => [
        EYE_WORD[f.eye],
        f.method,
        f.blindSpot ? `${fmt(f.blindSpot.xDeg)}°, ${fmt(f.blindSpot.yDeg)}°` : "—",
        f.blindSpot ? `${fmt(f.blindSpot.widthDeg)}° × ${fmt(f.blindSpot.heightDeg)}°` : "—",
        f.defectPresent ? f.defects || "Defect recorded" : f.defects || "None recorded",
        f.reliability ?? "—",
      ]),
    });
  const rf = s.redFlags;
  const symptoms: string[] = [];
  if (rf) {
    const eyeOf = (v: string | null) => (v ? ` (${v === "both" ? "both eyes" : `${v} eye`})` : "");
    const list: [string | null, string][] = [
      [rf.flashes, "flashes"],
      [rf.newFloaters, "new floaters"],
      [rf.curtain, "a shadow or curtain over the vision"],
      [rf.suddenLoss, "sudden loss of vision"],
      [rf.severePain, "severe eye pain"],
      [rf.redEye, "red eye"],
      [rf.distortion, "new distortion"],
    ];
    for (const [v, word] of list) if (v) symptoms.push(`${word}${eyeOf(v)}`);
    if (rf.newDiplopia) symptoms.push("new double vision");
    if (rf.gcaSymptoms) symptoms.push("headache with features of giant cell arteritis");
    else if (rf.headache) symptoms.push("headache");
  }
  if (s.diagnoses.length)
    measurements.push({
      title: "Diagnoses (ICD-10)",
      columns: ["Code", "Diagnosis", "Eye"],
      widths: [0.8, 3, 0.8],
      rows: s.diagnoses.map((d) => [d.code, d.label, EYE_WORD[d.eye as "both"] ?? d.eye]),
    });

  const attachments: LetterInput["attachments"] = [];
  for (const a of r.attachments) {
    let bytes: Buffer | null = null;
    if (opts.withAttachmentBytes !== false && ["application/pdf", "image/jpeg", "image/png"].includes(a.contentType))
      bytes = await storage.get(a.storageKey).catch(() => null);
    attachments.push({ name: a.originalName, contentType: a.contentType, description: a.description, bytes });
  }
  const rec = r.recipient;
  return {
    practice: {
      name: p.name,
      lines: [p.addressLine1, p.addressLine2, [p.city, p.postcode].filter(Boolean).join(" ")].filter(Boolean),
      phone: p.phone,
      email: p.email,
    },
    dated: formatDate(r.referral.sentAt ?? r.referral.queuedAt ?? new Date(), tz),
    reference: referenceOf(r.referral.id),
    recipient: rec
      ? {
          name: rec.name,
          clinic: rec.clinic,
          lines: [rec.addressLine1, rec.addressLine2, [rec.city, rec.postcode].filter(Boolean).join(" ")].filter(
            Boolean,
          ),
          email: rec.email,
        }
      : { name: "(recipient not chosen yet)", clinic: "", lines: [], email: null },
    patient: {
      name: `${r.patient.firstName} ${r.patient.lastName}`,
      dateOfBirth: formatDate(r.patient.dateOfBirth, tz, { day: "numeric", month: "short", year: "numeric" }),
      sex: SEX[r.patient.sex],
      reference: r.patient.id.slice(0, 8).toUpperCase(),
      address: [r.patient.addressLine1, r.patient.city, r.patient.postcode].filter(Boolean).join(", "),
    },
    urgency: {
      label: URGENCY_LABEL[r.referral.urgency],
      timeFrame: describeTimeFrame(r.referral.urgency, days),
      proposed: r.referral.proposedUrgency ? URGENCY_LABEL[r.referral.proposedUrgency] : null,
      overrideReason: r.referral.urgencyOverrideReason,
    },
    triage: triageLines(s.triage).map((t) => ({ urgency: URGENCY_LABEL[t.urgency] ?? t.urgency, text: t.text })),
    clinical: {
      symptoms: rf
        ? symptoms.length
          ? `Reported: ${symptoms.join(", ")}.${rf.notes ? ` ${rf.notes}` : ""}`
          : `Red-flag symptoms asked about and denied.${rf.notes ? ` ${rf.notes}` : ""}`
        : "",
      medications: (s.patientDetails?.medications || s.history?.medications || "").trim() || "None recorded",
      allergies: allergyLine(s.patientDetails),
      gp: s.patientDetails?.gp || "Not recorded",
      phone: s.patientDetails?.phone ?? "Not recorded",
    },
    reason: r.referral.reason,
    body: r.referral.body,
    findings: s.prompts
      .filter((x) => selected.has(findingKey(x)))
      .map((x) => ({ finding: x.message, eye: EYE_WORD[x.eye as "both"] ?? x.eye, value: promptValue(x) })),
    additionalFindings: r.referral.additionalFindings,
    measurements,
    history: r.referral.relevantHistory,
    exam: {
      examinedOn: formatDate(new Date(s.examinedAt), tz),
      signedOn: s.signedAt ? formatDate(new Date(s.signedAt), tz) : null,
    },
    optometrist: {
      name: r.author.name,
      licence: r.author.licenceNumber ?? "",
      role: r.author.role === "owner" ? "Optometrist, practice owner" : "Optometrist",
    },
    attachments,
  };
}

export async function renderLetter(r: LoadedReferral) {
  return buildLetterPdf(await letterInput(r));
}

// ------------------------------------------------------------------------------- sending

export const REFERRAL_MAIL_QUEUE = "referral-mail";
// 8 retries, 30 s doubling (about two hours in all); then the message shows "failed" with its reason.
const QUEUE_DEFAULTS = { retryLimit: 8, retryDelay: 30, retryBackoff: true, expireInSeconds: 120 };

type Sender = (mail: Mail) => Promise<unknown>;
let sender: Sender = sendMail;
/** Points the referral e-mails at another transport (tests use one that cannot connect). */
export function useReferralMailSender(next: Sender | null) {
  sender = next ?? sendMail;
}
/** A transport to an SMTP port, for tests of a failing relay. */
export function smtpSender(port: number): Sender {
  const t = nodemailer.createTransport({
    host: "127.0.0.1",
    port,
    secure: false,
    ignoreTLS: true,
    connectionTimeout: 2_000,
    greetingTimeout: 2_000,
  });
  return (mail) => t.sendMail({ from: env.MAIL_FROM, ...mail });
}

export const referralMail = defineJob<{ messageId: string }>(
  REFERRAL_MAIL_QUEUE,
  async (job, ctx) => {
    await deliverReferralMessage(job.messageId, ctx);
  },
  QUEUE_DEFAULTS,
);

async function queueMessage(
  tx: Tx,
  referralId: string,
  kind: "letter" | "chase" | "reply_notice",
  recipient: string,
  linkId: string | null,
) {
  const [m] = await tx
    .insert(referralMessages)
    .values({ referralId, kind, recipient, linkId })
    .returning({ id: referralMessages.id });
  await referralMail.enqueue({ messageId: m!.id }, { tx, singletonKey: m!.id });
  return m!.id;
}

/** One attempt right away, so a working relay shows "sent" at once; the queued job is the retry. */
async function tryNow(messageId: string) {
  try {
    await deliverReferralMessage(messageId, { retryCount: 0, retryLimit: QUEUE_DEFAULTS.retryLimit });
  } catch {
    // Left queued with its error; the job retries it.
  }
}

/** Checks what is needed, queues the letter and its signed link, then tries to send at once. */
export async function sendReferral(user: SessionUser, referralId: string, request: Request) {
  const messageId = await db.transaction(async (tx) => {
    const [r] = await tx.select().from(referrals).where(eq(referrals.id, referralId)).for("update");
    if (!r) throw notFound();
    if (r.status !== "draft") throw new ReferralError({ "": ["This letter has already been sent."] }, 409);
    const [exam] = await tx.select({ status: exams.status }).from(exams).where(eq(exams.id, r.examId));
    const [rec] = r.recipientId
      ? await tx.select().from(referralRecipients).where(eq(referralRecipients.id, r.recipientId))
      : [];
    const problems = sendProblems({
      recipientEmail: rec?.active ? rec.email : null,
      selectedFindings: r.selectedFindings,
      additionalFindings: r.additionalFindings,
      reason: r.reason,
      examSigned: exam?.status === "signed",
      triageReasons: r.snapshot.triage?.reasons.length ?? 0,
    });
    if (Object.keys(problems).length) throw new ReferralError(problems);
    const [p] = await tx.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
    const now = new Date();
    await tx
      .update(referrals)
      .set({ status: "queued", queuedAt: now, timeFrameDays: timeFramesOf(p!)[r.urgency], updatedAt: now })
      .where(eq(referrals.id, referralId));
    const link = await issueLink(tx, referralId, now);
    const id = await queueMessage(tx, referralId, "letter", rec!.email!, link.id);
    await tx
      .insert(referralEvents)
      .values({ referralId, kind: "queued", actorUserId: user.id, detail: { to: rec!.email } });
    await audit(
      {
        action: "referral.send_queued",
        actorUserId: user.id,
        entityType: "referral",
        entityId: referralId,
        patientId: r.patientId,
        detail: { to: rec!.email },
        request,
      },
      tx,
    );
    return id;
  });
  await tryNow(messageId);
  return messageId;
}

/** A failed message (retries used up) goes back on the queue. */
export async function retryMessage(user: SessionUser, referralId: string, messageId: string, request: Request) {
  const id = await db.transaction(async (tx) => {
    const [m] = await tx
      .select()
      .from(referralMessages)
      .where(and(eq(referralMessages.id, messageId), eq(referralMessages.referralId, referralId)))
      .for("update");
    if (!m) throw notFound();
    if (m.status !== "failed")
      throw new ReferralError(
        { "": ["This e-mail is not marked failed; it is still being retried or has gone."] },
        409,
      );
    await tx.update(referralMessages).set({ status: "queued" }).where(eq(referralMessages.id, messageId));
    await referralMail.enqueue({ messageId }, { tx });
    await audit(
      { action: "referral.send_retried", actorUserId: user.id, entityType: "referral", entityId: referralId, request },
      tx,
    );
    return messageId;
  });
  await tryNow(id);
}

/** Sends a reminder to the recipient of an overdue referral, with a live link. */
export async function chaseReferral(user: SessionUser, referralId: string, request: Request) {
  const id = await db.transaction(async (tx) => {
    const [r] = await tx.select().from(referrals).where(eq(referrals.id, referralId)).for("update");
    if (!r) throw notFound();
    const p = await practice();
    if (!canChase(r, new Date(), p.timeZone))
      throw new ReferralError(
        { "": ["Only an overdue referral can be chased, and not again within three days of the last reminder."] },
        409,
      );
    const [rec] = await tx.select().from(referralRecipients).where(eq(referralRecipients.id, r.recipientId!));
    if (!rec?.email)
      throw new ReferralError({
        "": ["The recipient has no e-mail address; add one in Settings → Referral recipients."],
      });
    const [live] = await tx
      .select()
      .from(referralLinks)
      .where(
        and(
          eq(referralLinks.referralId, referralId),
          isNull(referralLinks.revokedAt),
          sql`${referralLinks.expiresAt} > now() + interval '7 days'`,
        ),
      )
      .orderBy(desc(referralLinks.createdAt))
      .limit(1);
    const link = live ?? (await issueLink(tx, referralId));
    const now = new Date();
    await tx.update(referrals).set({ lastChasedAt: now, updatedAt: now }).where(eq(referrals.id, referralId));
    const mid = await queueMessage(tx, referralId, "chase", rec.email, link.id);
    await tx
      .insert(referralEvents)
      .values({ referralId, kind: "chased", actorUserId: user.id, detail: { to: rec.email } });
    await audit(
      {
        action: "referral.chased",
        actorUserId: user.id,
        entityType: "referral",
        entityId: referralId,
        patientId: r.patientId,
        request,
      },
      tx,
    );
    return mid;
  });
  await tryNow(id);
}

export async function withdrawReferral(user: SessionUser, referralId: string, request: Request) {
  await db.transaction(async (tx) => {
    const [r] = await tx.select().from(referrals).where(eq(referrals.id, referralId)).for("update");
    if (!r) throw notFound();
    if (r.status === "draft" || r.status === "withdrawn")
      throw new ReferralError({ "": ["Only a sent referral can be withdrawn; discard a draft instead."] }, 409);
    const now = new Date();
    await tx
      .update(referrals)
      .set({ status: "withdrawn", withdrawnAt: now, updatedAt: now })
      .where(eq(referrals.id, referralId));
    await tx
      .update(referralLinks)
      .set({ revokedAt: now })
      .where(and(eq(referralLinks.referralId, referralId), isNull(referralLinks.revokedAt)));
    await tx.insert(referralEvents).values({ referralId, kind: "withdrawn", actorUserId: user.id });
    await audit(
      {
        action: "referral.withdrawn",
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

export const linkUrl = (token: string) => absoluteUrl(`/r/${token}`);

async function composeMail(tx: Tx, m: typeof referralMessages.$inferSelect): Promise<Mail> {
  const [r] = await tx.select().from(referrals).where(eq(referrals.id, m.referralId));
  const loaded = await loadReferral(r!.id);
  const p = await practice();
  const ref = referenceOf(r!.id);
  const [link] = m.linkId ? await tx.select().from(referralLinks).where(eq(referralLinks.id, m.linkId)) : [];
  const url = link ? linkUrl(signLink(link)) : null;
  const expires = link ? formatDate(link.expiresAt, p.timeZone) : "";
  const urgency = URGENCY_LABEL[r!.urgency];
  const sign = `${loaded.author.name}\n${p.name}${p.phone ? `\nTel ${p.phone}` : ""}`;
  if (m.kind === "letter") {
    const pdf = await buildLetterPdf(await letterInput(loaded));
    return {
      to: m.recipient,
      subject: `Referral ${ref} (${urgency}) from ${p.name}`,
      text: `Dear ${loaded.recipient?.name ?? "colleague"},\n\nPlease find attached a referral letter (${urgency.toLowerCase()}) for a patient of ${p.name}. The patient's details are in the attached PDF only.\n\nAt the link below you can acknowledge receipt, give the appointment date and send a short reply or your consult letter back to us. No account is needed; the link works for this referral only and expires on ${expires}.\n\n${url}\n\nWith thanks,\n${sign}\n\nThis e-mail and its attachment are confidential and meant for the named recipient only. If you received them in error, please tell us and delete them.\n`,
      attachments: [{ filename: `referral-${ref}.pdf`, content: Buffer.from(pdf), contentType: "application/pdf" }],
      // The optometrist's own letter: not marked Auto-Submitted, so the recipient's out-of-office answer reaches us.
      automatic: false,
    };
  }
  if (m.kind === "chase") {
    return {
      to: m.recipient,
      subject: `Reminder: referral ${ref} (${urgency}) from ${p.name}`,
      text: `Dear ${loaded.recipient?.name ?? "colleague"},\n\nWe sent you referral ${ref} (${urgency.toLowerCase()}) on ${formatDate(r!.sentAt ?? r!.createdAt, p.timeZone)} and have not yet heard whether the patient has been seen. Could you acknowledge it, give the appointment date or reply at this link (expires on ${expires}):\n\n${url}\n\nWith thanks,\n${sign}\n`,
    };
  }
  return {
    to: m.recipient,
    subject: `Reply received for referral ${ref}`,
    text: `${loaded.recipient?.name ?? "The recipient"} has replied to referral ${ref}. Read the reply (sign-in needed):\n\n${absoluteUrl(`/referrals/${r!.id}`)}\n\nThe reply is also in the patient's chart.\n`,
  };
}

export type DeliveryResult = "sent" | "already done";

/** The job: send one message at most once. Throws on a failed send so the queue retries it. */
export async function deliverReferralMessage(
  messageId: string,
  job: { retryCount: number; retryLimit: number },
): Promise<DeliveryResult> {
  try {
    return await db.transaction(async (tx) => {
      const [m] = await tx.select().from(referralMessages).where(eq(referralMessages.id, messageId)).for("update");
      if (!m || m.status === "sent") return "already done";
      const [r] = await tx.select({ status: referrals.status }).from(referrals).where(eq(referrals.id, m.referralId));
      if (r?.status === "withdrawn" && m.kind !== "reply_notice") {
        await tx
          .update(referralMessages)
          .set({ status: "failed", lastError: "referral withdrawn before sending" })
          .where(eq(referralMessages.id, messageId));
        return "already done";
      }
      const mail = await composeMail(tx, m);
      await sender(mail);
      const now = new Date();
      await tx
        .update(referralMessages)
        .set({ status: "sent", sentAt: now, attempts: m.attempts + 1, lastError: null })
        .where(eq(referralMessages.id, messageId));
      if (m.kind === "letter") {
        await tx
          .update(referrals)
          .set({ status: "sent", sentAt: now, updatedAt: now })
          .where(and(eq(referrals.id, m.referralId), eq(referrals.status, "queued")));
        await tx.insert(referralEvents).values({ referralId: m.referralId, kind: "sent", detail: { to: m.recipient } });
      }
      return "sent";
    });
  } catch (error) {
    const last = job.retryCount >= job.retryLimit;
    const reason = ((error as Error).message || String(error)).slice(0, 500);
    await db
      .update(referralMessages)
      .set({ attempts: sql`${referralMessages.attempts} + 1`, lastError: reason, status: last ? "failed" : "queued" })
      .where(and(eq(referralMessages.id, messageId), inArray(referralMessages.status, ["queued", "failed"])));
    throw error;
  }
}

// ------------------------------------------------------------------------------- the recipient

/** What the recipient's page shows: a summary, no more of the chart than the letter carries. */
export async function publicSummary(referralId: string) {
  const r = await loadReferral(referralId);
  const p = await practice();
  const selected = new Set(r.referral.selectedFindings);
  const replies = await db
    .select({
      id: referralReplies.id,
      authorName: referralReplies.authorName,
      body: referralReplies.body,
      fileName: referralReplies.fileName,
      createdAt: referralReplies.createdAt,
    })
    .from(referralReplies)
    .where(eq(referralReplies.referralId, referralId))
    .orderBy(asc(referralReplies.createdAt));
  return {
    reference: referenceOf(r.referral.id),
    practice: { name: p.name, phone: p.phone, email: p.email },
    optometrist: { name: r.author.name, licence: r.author.licenceNumber ?? "" },
    recipient: r.recipient ? { name: r.recipient.name, clinic: r.recipient.clinic } : null,
    patient: {
      name: `${r.patient.firstName} ${r.patient.lastName}`,
      dateOfBirth: formatDate(r.patient.dateOfBirth, p.timeZone, { day: "numeric", month: "short", year: "numeric" }),
    },
    urgency: URGENCY_LABEL[r.referral.urgency],
    timeFrame: describeTimeFrame(r.referral.urgency, r.referral.timeFrameDays ?? timeFramesOf(p)[r.referral.urgency]),
    reason: r.referral.reason,
    findings: r.referral.snapshot.prompts
      .filter((x) => selected.has(findingKey(x)))
      .map((x) => ({ message: x.message, value: promptValue(x) })),
    additionalFindings: r.referral.additionalFindings,
    sentOn: r.referral.sentAt ? formatDate(r.referral.sentAt, p.timeZone) : null,
    status: r.referral.status,
    acknowledgedAt: r.referral.acknowledgedAt ? formatDate(r.referral.acknowledgedAt, p.timeZone) : null,
    acknowledgedBy: r.referral.acknowledgedBy,
    appointmentOn: r.referral.appointmentOn,
    replies: replies.map((x) => ({
      ...x,
      createdAt: formatDate(x.createdAt, p.timeZone, {
        day: "numeric",
        month: "short",
        year: "numeric",
        hour: "2-digit",
        minute: "2-digit",
      }),
    })),
  };
}

async function lockLive(tx: Tx, referralId: string) {
  const [r] = await tx.select().from(referrals).where(eq(referrals.id, referralId)).for("update");
  if (!r || r.status === "withdrawn" || r.status === "draft" || r.status === "queued")
    throw new ReferralError({ "": ["This referral is no longer open for replies. Contact the practice."] }, 409);
  return r;
}

export async function acknowledge(referralId: string, linkId: string, name: string, request: Request) {
  await db.transaction(async (tx) => {
    const r = await lockLive(tx, referralId);
    const now = new Date();
    if (!r.acknowledgedAt)
      await tx
        .update(referrals)
        .set({
          acknowledgedAt: now,
          acknowledgedBy: name,
          status: r.status === "sent" ? "acknowledged" : r.status,
          updatedAt: now,
        })
        .where(eq(referrals.id, referralId));
    await tx.insert(referralEvents).values({ referralId, kind: "acknowledged", actorName: name, detail: { linkId } });
    await audit(
      {
        action: "referral.link_acknowledged",
        entityType: "referral",
        entityId: referralId,
        patientId: r.patientId,
        detail: { linkId, name },
        request,
      },
      tx,
    );
  });
}

export async function setAppointment(referralId: string, linkId: string, name: string, date: string, request: Request) {
  await db.transaction(async (tx) => {
    const r = await lockLive(tx, referralId);
    const now = new Date();
    await tx
      .update(referrals)
      .set({
        appointmentOn: date,
        acknowledgedAt: r.acknowledgedAt ?? now,
        acknowledgedBy: r.acknowledgedBy ?? name,
        status: r.status === "sent" ? "acknowledged" : r.status,
        updatedAt: now,
      })
      .where(eq(referrals.id, referralId));
    await tx
      .insert(referralEvents)
      .values({ referralId, kind: "appointment_set", actorName: name, detail: { linkId, date } });
    await audit(
      {
        action: "referral.link_appointment_set",
        entityType: "referral",
        entityId: referralId,
        patientId: r.patientId,
        detail: { linkId, name, date },
        request,
      },
      tx,
    );
  });
}

export const REPLY_FILE_TYPES = { "application/pdf": "pdf", "image/jpeg": "jpg", "image/png": "png" } as const;
export const REPLY_FILE_MAX_BYTES = 10 * 1024 * 1024;

/** The type of an upload read from its first bytes (never the browser's word for it). */
export function sniffType(bytes: Uint8Array): keyof typeof REPLY_FILE_TYPES | null {
  if (bytes.length >= 5 && Buffer.from(bytes.subarray(0, 5)).toString("latin1") === "%PDF-") return "application/pdf";
  if (bytes.length >= 3 && bytes[0] === 0xff && bytes[1] === 0xd8 && bytes[2] === 0xff) return "image/jpeg";
  if (
    bytes.length >= 8 &&
    Buffer.from(bytes.subarray(0, 8)).equals(Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]))
  )
    return "image/png";
  return null;
}

export async function reply(
  referralId: string,
  linkId: string,
  input: {
    name: string;
    body: string;
    file: { name: string; bytes: Uint8Array; type: keyof typeof REPLY_FILE_TYPES } | null;
  },
  request: Request,
) {
  let key: string | null = null;
  try {
    key = input.file
      ? await storage.put(input.file.bytes, {
          prefix: "referral-replies",
          extension: REPLY_FILE_TYPES[input.file.type],
          contentType: input.file.type,
        })
      : null;
  } catch (error) {
    // Nothing is recorded without its file: the reply can simply be sent again.
    if (error instanceof StorageUnavailableError)
      throw new ReferralError(
        {
          file: [
            "The file could not be stored just now (file storage is not reachable). Nothing was saved; please send your reply again in a few minutes.",
          ],
        },
        503,
      );
    throw error;
  }
  let messageId: string | null = null;
  try {
    messageId = await db.transaction(async (tx) => {
      const r = await lockLive(tx, referralId);
      const now = new Date();
      const [row] = await tx
        .insert(referralReplies)
        .values({
          referralId,
          patientId: r.patientId,
          authorName: input.name,
          body: input.body,
          fileName: input.file?.name ?? null,
          fileType: input.file?.type ?? null,
          fileKey: key,
          fileSize: input.file?.bytes.length ?? null,
        })
        .returning({ id: referralReplies.id });
      await tx
        .update(referrals)
        .set({
          status: "replied",
          repliedAt: now,
          acknowledgedAt: r.acknowledgedAt ?? now,
          acknowledgedBy: r.acknowledgedBy ?? input.name,
          updatedAt: now,
        })
        .where(eq(referrals.id, referralId));
      await tx.insert(referralEvents).values({
        referralId,
        kind: "replied",
        actorName: input.name,
        detail: { linkId, replyId: row!.id, file: input.file?.name ?? null },
      });
      await audit(
        {
          action: "referral.link_replied",
          entityType: "referral",
          entityId: referralId,
          patientId: r.patientId,
          detail: { linkId, name: input.name, replyId: row!.id },
          request,
        },
        tx,
      );
      const [author] = await tx
        .select({ email: users.email, active: users.active })
        .from(users)
        .where(eq(users.id, r.createdById));
      return author?.active ? queueMessage(tx, referralId, "reply_notice", author.email, null) : null;
    });
  } catch (error) {
    if (key) await storage.delete(key).catch(() => undefined);
    throw error;
  }
  if (messageId) await tryNow(messageId);
}

// ------------------------------------------------------------------------------- lists

/** Every referral for the tracking table, with the status shown and the delivery state. */
export async function trackingRows(now = new Date()) {
  const p = await practice();
  const rows = await db
    .select({
      id: referrals.id,
      status: referrals.status,
      urgency: referrals.urgency,
      sentAt: referrals.sentAt,
      queuedAt: referrals.queuedAt,
      createdAt: referrals.createdAt,
      appointmentOn: referrals.appointmentOn,
      timeFrameDays: referrals.timeFrameDays,
      lastChasedAt: referrals.lastChasedAt,
      patientId: patients.id,
      firstName: patients.firstName,
      lastName: patients.lastName,
      recipientName: referralRecipients.name,
      recipientClinic: referralRecipients.clinic,
      authorName: users.name,
      lastMessageStatus: sql<
        string | null
      >`(select m.status from ${referralMessages} m where m.referral_id = ${referrals.id} order by m.created_at desc limit 1)`,
      lastMessageError: sql<
        string | null
      >`(select m.last_error from ${referralMessages} m where m.referral_id = ${referrals.id} order by m.created_at desc limit 1)`,
    })
    .from(referrals)
    .innerJoin(patients, eq(patients.id, referrals.patientId))
    .innerJoin(users, eq(users.id, referrals.createdById))
    .leftJoin(referralRecipients, eq(referralRecipients.id, referrals.recipientId))
    .orderBy(desc(referrals.createdAt))
    .limit(500);
  return rows.map((r) => {
    const shown = displayStatus(r, now, p.timeZone);
    const due = dueBy(r);
    return {
      id: r.id,
      reference: referenceOf(r.id),
      patient: `${r.lastName}, ${r.firstName}`,
      patientId: r.patientId,
      recipient: r.recipientName ? `${r.recipientName}${r.recipientClinic ? `, ${r.recipientClinic}` : ""}` : "—",
      urgency: r.urgency,
      status: shown,
      author: r.authorName,
      sentOn: r.sentAt ? localDate(r.sentAt, p.timeZone) : null,
      dueOn: due ? localDate(due, p.timeZone) : null,
      appointmentOn: r.appointmentOn,
      delivery: r.lastMessageStatus as "queued" | "sent" | "failed" | null,
      deliveryError: r.lastMessageError,
      canChase: canChase(r, now, p.timeZone),
    };
  });
}

/**
 * The referrals of one patient for the chart's timeline: status, recipient, dates and replies.
 * Clinical text (reason, reply bodies) is left out for roles that may not read clinical notes.
 */
export async function referralsForChart(patientId: string, opts: { clinical: boolean }, now = new Date()) {
  const p = await practice();
  const rows = await db
    .select({ referral: referrals, recipientName: referralRecipients.name, recipientClinic: referralRecipients.clinic })
    .from(referrals)
    .leftJoin(referralRecipients, eq(referralRecipients.id, referrals.recipientId))
    .where(eq(referrals.patientId, patientId))
    .orderBy(desc(referrals.createdAt));
  const replies = rows.length
    ? await db
        .select({
          id: referralReplies.id,
          referralId: referralReplies.referralId,
          authorName: referralReplies.authorName,
          body: referralReplies.body,
          fileName: referralReplies.fileName,
          createdAt: referralReplies.createdAt,
        })
        .from(referralReplies)
        .where(eq(referralReplies.patientId, patientId))
        .orderBy(asc(referralReplies.createdAt))
    : [];
  return rows.map(({ referral: r, recipientName, recipientClinic }) => ({
    id: r.id,
    reference: referenceOf(r.id),
    status: displayStatus(r, now, p.timeZone),
    urgency: r.urgency,
    recipient: recipientName ? `${recipientName}${recipientClinic ? `, ${recipientClinic}` : ""}` : null,
    createdAt: r.createdAt.toISOString(),
    sentAt: r.sentAt?.toISOString() ?? null,
    appointmentOn: r.appointmentOn,
    reason: opts.clinical ? r.reason : null,
    replies: replies
      .filter((x) => x.referralId === r.id)
      .map((x) => ({
        id: x.id,
        authorName: x.authorName,
        body: opts.clinical ? x.body : null,
        fileName: x.fileName,
        createdAt: x.createdAt.toISOString(),
      })),
  }));
}
