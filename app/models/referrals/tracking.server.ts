/** The referral lists: the tracking table and the chart. */
import { asc, desc, eq, sql } from "drizzle-orm";
import { patients, referralMessages, referralRecipients, referralReplies, referrals, users } from "~/db/schema";
import { canChase, displayStatus, dueBy, localDate, type DisplayStatus } from "~/lib/referrals";
import { db } from "~/utils/db.server";
import { practice, referenceOf } from "./common.server";

/** Every referral for the tracking table, with the status shown and the delivery state. */
export async function trackingRows(now = new Date()) {
  const p = await practice();
  const rows = await db
    .select({
      id: referrals.id,
      number: referrals.number,
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
      reference: referenceOf(r.number),
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

export type TrackingRow = Awaited<ReturnType<typeof trackingRows>>[number];

/** Columns the tracking table sorts by, as they appear in the URL. */
export const TRACKING_SORTS = [
  "reference",
  "patient",
  "recipient",
  "urgency",
  "status",
  "sentOn",
  "dueOn",
  "appointmentOn",
] as const;
export type TrackingSort = (typeof TRACKING_SORTS)[number];
export type TrackingQuery = {
  status: DisplayStatus | null;
  sort: TrackingSort | null;
  dir: "asc" | "desc";
  page: number;
  pageSize: number;
};

const URGENCY_ORDER = { same_day: 0, urgent: 1, soon: 2, routine: 3 } as Record<string, number>;

/**
 * One page of the tracking table: filtered by the status shown, sorted (newest first unless a
 * column is chosen; empty values last either way) and cut to the page, with the count of each
 * status for the filter's choices. The status shown depends on today and the time frame, so the
 * filter and the order are applied to the computed rows here rather than in SQL.
 */
export async function trackingPage(q: TrackingQuery, now = new Date()) {
  const all = await trackingRows(now);
  const counts = {} as Record<DisplayStatus, number>;
  for (const r of all) counts[r.status] = (counts[r.status] ?? 0) + 1;
  const filtered = q.status ? all.filter((r) => r.status === q.status) : all;
  if (q.sort) {
    const key = q.sort;
    const sign = q.dir === "desc" ? -1 : 1;
    const value = (r: TrackingRow): string | number | null =>
      key === "urgency" ? (URGENCY_ORDER[r.urgency] ?? 9) : key === "recipient" && r.recipient === "—" ? null : r[key];
    filtered.sort((a, b) => {
      const x = value(a);
      const y = value(b);
      if (x === null || y === null) return x === y ? 0 : x === null ? 1 : -1;
      return sign * (typeof x === "number" && typeof y === "number" ? x - y : String(x).localeCompare(String(y)));
    });
  }
  const start = (q.page - 1) * q.pageSize;
  return { rows: filtered.slice(start, start + q.pageSize), total: filtered.length, all: all.length, counts };
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
    reference: referenceOf(r.number),
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
