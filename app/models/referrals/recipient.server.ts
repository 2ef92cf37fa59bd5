/** The recipient's side through the signed link: the summary, acknowledging, the appointment and the reply. */
import { and, asc, desc, eq, isNotNull, sql } from "drizzle-orm";
import { referralEvents, referralReplies, referrals, users } from "~/db/schema";
import { describeTimeFrame, findingKey, promptValue, timeFramesOf, URGENCY_LABEL } from "~/lib/referrals";
import { audit } from "~/utils/audit.server";
import { db, type Tx } from "~/utils/db.server";
import { storage, StorageUnavailableError } from "~/utils/storage.server";
import { ReferralError, formatDate, practice, referenceOf } from "./common.server";
import { queueMessage, tryNow } from "./delivery.server";
import { loadReferral } from "./drafts.server";

/**
 * What the recipient's page shows: a summary, no more of the chart than the letter carries, and
 * the name last given through this link (so the recipient types it once).
 */
export async function publicSummary(referralId: string, linkId?: string) {
  const r = await loadReferral(referralId);
  const p = await practice();
  const [last] = linkId
    ? await db
        .select({ name: referralEvents.actorName })
        .from(referralEvents)
        .where(
          and(
            eq(referralEvents.referralId, referralId),
            isNotNull(referralEvents.actorName),
            sql`${referralEvents.detail}->>'linkId' = ${linkId}`,
          ),
        )
        .orderBy(desc(referralEvents.at))
        .limit(1)
    : [];
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
    reference: referenceOf(r.referral.number),
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
    responder: last?.name ?? "",
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
    throw new ReferralError("This referral is no longer open for replies. Contact the practice.", { status: 409 });
  return r;
}

export async function acknowledge(referralId: string, linkId: string, name: string, request: Request) {
  await db.transaction(async (tx) => {
    const r = await lockLive(tx, referralId);
    const now = new Date();
    if (r.acknowledgedAt) {
      const p = await practice();
      throw new ReferralError(
        `Receipt was already acknowledged on ${formatDate(r.acknowledgedAt, p.timeZone)}${r.acknowledgedBy ? ` by ${r.acknowledgedBy}` : ""}.`,
        { status: 409 },
      );
    }
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
        "The file could not be stored just now (file storage is not reachable). Nothing was saved; please send your reply again in a few minutes.",
        { status: 503, field: "file" },
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
