/** What the referral page shows: the letter or the draft, its delivery, events and replies (reading replies marks them read). */
import { and, asc, desc, eq, isNull } from "drizzle-orm";
import { formatDate, loadReferral, practice, referenceOf, triageProposal } from "./referrals.server";
import {
  documents,
  patients,
  referralEvents,
  referralLinks,
  referralMessages,
  referralRecipients,
  referralReplies,
  referrals,
  users,
} from "~/db/schema";
import {
  canChase,
  displayStatus,
  dueBy,
  findingKey,
  localDate,
  promptValue,
  timeFramesOf,
  URGENCY_LABEL,
} from "~/lib/referrals";
import { audit } from "~/utils/audit.server";
import { db } from "~/utils/db.server";
import { notFound } from "~/utils/failure.server";
import type { SessionUser } from "~/utils/session.server";
import { openStored } from "~/utils/storage-response.server";

const EVENT_LABEL: Record<string, string> = {
  drafted: "Draft started",
  queued: "Queued for sending",
  sent: "Letter e-mailed",
  acknowledged: "Receipt acknowledged",
  appointment_set: "Appointment date given",
  replied: "Reply received",
  chased: "Reminder sent to the recipient",
  withdrawn: "Referral withdrawn",
};
const MESSAGE_LABEL = {
  letter: "Referral letter",
  chase: "Reminder",
  reply_notice: "Reply notice to the optometrist",
} as const;

export async function referralPageData(
  user: SessionUser,
  referralId: string | undefined,
  preview: boolean,
  request: Request,
) {
  const r = await loadReferral(referralId);
  const p = await practice();
  const clinical = user.role !== "receptionist";
  const now = new Date();
  const [messages, events, replies, links] = await Promise.all([
    db
      .select()
      .from(referralMessages)
      .where(eq(referralMessages.referralId, r.referral.id))
      .orderBy(desc(referralMessages.createdAt)),
    db
      .select({
        kind: referralEvents.kind,
        at: referralEvents.at,
        actorName: referralEvents.actorName,
        userName: users.name,
        detail: referralEvents.detail,
      })
      .from(referralEvents)
      .leftJoin(users, eq(users.id, referralEvents.actorUserId))
      .where(eq(referralEvents.referralId, r.referral.id))
      .orderBy(asc(referralEvents.at), asc(referralEvents.id)),
    clinical
      ? db
          .select({
            id: referralReplies.id,
            authorName: referralReplies.authorName,
            body: referralReplies.body,
            fileName: referralReplies.fileName,
            createdAt: referralReplies.createdAt,
            readAt: referralReplies.readAt,
          })
          .from(referralReplies)
          .where(eq(referralReplies.referralId, r.referral.id))
          .orderBy(asc(referralReplies.createdAt))
      : Promise.resolve([]),
    db
      .select()
      .from(referralLinks)
      .where(and(eq(referralLinks.referralId, r.referral.id), isNull(referralLinks.revokedAt)))
      .orderBy(desc(referralLinks.createdAt))
      .limit(1),
  ]);
  const when = (d: Date) =>
    formatDate(d, p.timeZone, { day: "numeric", month: "short", year: "numeric", hour: "2-digit", minute: "2-digit" });
  const status = displayStatus(r.referral, now, p.timeZone);
  const due = dueBy(r.referral);
  const summary = {
    id: r.referral.id,
    reference: referenceOf(r.referral.number),
    stored: r.referral.status,
    status,
    urgency: URGENCY_LABEL[r.referral.urgency],
    proposedUrgency: r.referral.proposedUrgency ? URGENCY_LABEL[r.referral.proposedUrgency] : null,
    urgencyOverrideReason: clinical ? r.referral.urgencyOverrideReason : null,
    patient: {
      id: r.patient.id,
      name: `${r.patient.firstName} ${r.patient.lastName}`,
      dateOfBirth: r.patient.dateOfBirth,
    },
    recipient: r.recipient ? { name: r.recipient.name, clinic: r.recipient.clinic, email: r.recipient.email } : null,
    author: r.author.name,
    sentAt: r.referral.sentAt ? when(r.referral.sentAt) : null,
    dueOn: due ? localDate(due, p.timeZone) : null,
    acknowledgedAt: r.referral.acknowledgedAt ? when(r.referral.acknowledgedAt) : null,
    acknowledgedBy: r.referral.acknowledgedBy,
    appointmentOn: r.referral.appointmentOn,
    canChase: canChase(r.referral, now, p.timeZone),
    link: links[0]
      ? {
          expiresOn: formatDate(links[0].expiresAt, p.timeZone),
          lastOpened: links[0].lastOpenedAt ? when(links[0].lastOpenedAt) : null,
        }
      : null,
    messages: messages.map((m) => ({
      id: m.id,
      kind: MESSAGE_LABEL[m.kind],
      status: m.status,
      to: m.recipient,
      attempts: m.attempts,
      error: m.lastError,
      at: when(m.sentAt ?? m.createdAt),
    })),
    events: events.map((e) => ({
      label: EVENT_LABEL[e.kind] ?? e.kind,
      at: when(e.at),
      by: e.userName ?? e.actorName ?? "",
      date: clinical && typeof e.detail?.date === "string" ? e.detail.date : null,
    })),
  };
  if (!clinical) return { clinical: false as const, summary };

  await audit({
    action: "referral.read",
    actorUserId: user.id,
    entityType: "referral",
    entityId: r.referral.id,
    patientId: r.patient.id,
    request,
  });
  // Replies count as read once a clinician has opened the referral.
  const unread = new Set(replies.filter((x) => !x.readAt).map((x) => x.id));
  if (unread.size)
    await db
      .update(referralReplies)
      .set({ readAt: now, readById: user.id })
      .where(and(eq(referralReplies.referralId, r.referral.id), isNull(referralReplies.readAt)));
  const selected = new Set(r.referral.selectedFindings);
  const base = {
    clinical: true as const,
    summary,
    examUrl: `/patients/${r.patient.id}/exams/${r.referral.examId}`,
    examSigned: r.examStatus === "signed",
    replies: replies.map(({ readAt: _r, ...x }) => ({ ...x, createdAt: when(x.createdAt), isNew: unread.has(x.id) })),
    preview: preview,
  };
  if (r.referral.status !== "draft") {
    return {
      ...base,
      draft: null,
      letter: {
        reason: r.referral.reason,
        findings: r.referral.snapshot.prompts
          .filter((x) => selected.has(findingKey(x)))
          .map((x) => ({ message: x.message, value: promptValue(x), rule: x.rule })),
        additionalFindings: r.referral.additionalFindings,
        attachments: r.attachments.map((a) => a.originalName),
      },
    };
  }
  const { recipients, uploads } = await letterChoices(r.patient.id);
  return {
    ...base,
    letter: null,
    draft: {
      prompts: r.referral.snapshot.prompts,
      triage: triageProposal(r.referral.snapshot, r.referral.proposedUrgency),
      recipients,
      uploads: uploads.map((u) => ({ ...u, createdAt: u.createdAt.toISOString() })),
      timeFrames: timeFramesOf(p),
      defaults: {
        recipientId: r.referral.recipientId ?? "",
        urgency: r.referral.urgency,
        urgencyOverrideReason: r.referral.urgencyOverrideReason ?? "",
        reason: r.referral.reason,
        body: r.referral.body,
        relevantHistory: r.referral.relevantHistory,
        additionalFindings: r.referral.additionalFindings,
        selectedFindings: r.referral.selectedFindings,
        attachmentIds: r.attachments.map((a) => a.id),
      },
    },
  };
}

/** What a letter about `patientId` can go to and enclose: the active recipients, and the patient's documents, newest first. */
export async function letterChoices(patientId: string) {
  const [recipients, uploads] = await Promise.all([
    db
      .select({
        id: referralRecipients.id,
        name: referralRecipients.name,
        clinic: referralRecipients.clinic,
        email: referralRecipients.email,
        preferredDelivery: referralRecipients.preferredDelivery,
      })
      .from(referralRecipients)
      .where(eq(referralRecipients.active, true))
      .orderBy(asc(referralRecipients.name)),
    db
      .select({
        id: documents.id,
        originalName: documents.originalName,
        kind: documents.kind,
        description: documents.description,
        contentType: documents.contentType,
        createdAt: documents.createdAt,
      })
      .from(documents)
      .where(eq(documents.patientId, patientId))
      .orderBy(desc(documents.createdAt)),
  ]);
  return { recipients, uploads };
}

/** The patient a new letter is about: name, date of birth, medications and allergies. */
export async function letterPatient(patientId: string) {
  const [patient] = await db
    .select({
      id: patients.id,
      firstName: patients.firstName,
      lastName: patients.lastName,
      dateOfBirth: patients.dateOfBirth,
      medications: patients.medications,
      allergies: patients.allergies,
    })
    .from(patients)
    .where(eq(patients.id, patientId));
  if (!patient) throw new Error(`exam's patient ${patientId} is missing`);
  return patient;
}

/** The letters already started from `examId`, newest first. */
export async function lettersOfExam(examId: string) {
  return db
    .select({ id: referrals.id, status: referrals.status })
    .from(referrals)
    .where(eq(referrals.examId, examId))
    .orderBy(desc(referrals.createdAt));
}

/**
 * A consult letter the recipient uploaded, opened from object storage for the practice's
 * clinicians, with an audit row of the viewing. 404 when the referral has no such reply with a
 * file, or the file is missing from storage.
 */
export async function openReplyFile(user: SessionUser, referralId: string, replyId: string, request: Request) {
  const [reply] = await db
    .select()
    .from(referralReplies)
    .where(and(eq(referralReplies.id, replyId), eq(referralReplies.referralId, referralId)));
  if (!reply?.fileKey || !reply.fileType) notFound();
  const file = await openStored(reply.fileKey);
  if (!file) notFound("The file is missing from storage.");
  await audit({
    action: "referral.reply_file_viewed",
    actorUserId: user.id,
    entityType: "referral_reply",
    entityId: reply.id,
    patientId: reply.patientId,
    request,
  });
  return { reply: { ...reply, fileType: reply.fileType }, file };
}
