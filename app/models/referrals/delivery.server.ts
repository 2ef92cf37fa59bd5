/** Sending the letter: the e-mail queue (each message sent at most once, retried), chasing and withdrawing. */
import { and, desc, eq, inArray, isNull, sql } from "drizzle-orm";
import nodemailer from "nodemailer";
import {
  exams,
  practiceSettings,
  referralEvents,
  referralLinks,
  referralMessages,
  referralRecipients,
  referrals,
} from "~/db/schema";
import { canChase, sendProblems, timeFramesOf, URGENCY_LABEL } from "~/lib/referrals";
import { audit } from "~/utils/audit.server";
import { db, type Tx } from "~/utils/db.server";
import { env } from "~/utils/env.server";
import { defineJob } from "~/utils/jobs.server";
import { absoluteUrl, sendMail, type Mail } from "~/utils/mail.server";
import type { SessionUser } from "~/utils/session.server";
import { buildLetterPdf } from "./letter-pdf.server";
import { issueLink, signLink } from "./links.server";
import { ReferralError, formatDate, practice, referenceOf } from "./common.server";
import { notFound } from "~/utils/failure.server";
import { loadReferral } from "./drafts.server";
import { letterInput } from "./letter.server";

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

export async function queueMessage(
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
export async function tryNow(messageId: string) {
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
    if (!r) notFound();
    if (r.status !== "draft") throw new ReferralError("This letter has already been sent.", { status: 409 });
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
    if (Object.keys(problems).length) throw ReferralError.inFields(problems);
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

/** The referral's newest e-mail: whether it went and, if not, why (for the toast after sending). */
export async function latestMessage(referralId: string) {
  const [m] = await db
    .select({ status: referralMessages.status, error: referralMessages.lastError })
    .from(referralMessages)
    .where(eq(referralMessages.referralId, referralId))
    .orderBy(desc(referralMessages.createdAt))
    .limit(1);
  return m;
}

/** A failed message (retries used up) goes back on the queue. */
export async function retryMessage(user: SessionUser, referralId: string, messageId: string, request: Request) {
  const id = await db.transaction(async (tx) => {
    const [m] = await tx
      .select()
      .from(referralMessages)
      .where(and(eq(referralMessages.id, messageId), eq(referralMessages.referralId, referralId)))
      .for("update");
    if (!m) notFound();
    if (m.status !== "failed")
      throw new ReferralError("This e-mail is not marked failed; it is still being retried or has gone.", {
        status: 409,
      });
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
    if (!r) notFound();
    const p = await practice();
    if (!canChase(r, new Date(), p.timeZone))
      throw new ReferralError(
        "Only an overdue referral can be chased, and not again within three days of the last reminder.",
        { status: 409 },
      );
    const [rec] = await tx.select().from(referralRecipients).where(eq(referralRecipients.id, r.recipientId!));
    if (!rec?.email)
      throw new ReferralError("The recipient has no e-mail address; add one in Settings → Referral recipients.");
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
    if (!r) notFound();
    if (r.status === "draft" || r.status === "withdrawn")
      throw new ReferralError("Only a sent referral can be withdrawn; discard a draft instead.", { status: 409 });
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
  const ref = referenceOf(r!.number);
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
