/** The referral lists: the tracking table and the chart. */
import { asc, desc, eq, sql } from "drizzle-orm";
import { patients, referralMessages, referralRecipients, referralReplies, referrals, users } from "~/db/schema";
import { canChase, displayStatus, dueBy, localDate } from "~/lib/referrals";
import { db } from "~/utils/db.server";
import { practice, referenceOf } from "./common.server";

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
