/** The referral lists: the tracking table and the chart. */
import { and, asc, count, desc, eq, sql, type SQL } from "drizzle-orm";
import { patients, referralMessages, referralRecipients, referralReplies, referrals, users } from "~/db/schema";
import { canChase, displayStatus, dueBy, localDate, type DisplayStatus } from "~/lib/referrals";
import { db } from "~/utils/db.server";
import { practice, referenceOf } from "./common.server";
import { searchCondition } from "~/models/patients/patients.server";

/** The status shown (`displayStatus` in app/lib/referrals), computed in SQL so the list filters, sorts and pages there. */
function shownStatus(now: Date, timeZone: string) {
  return sql<DisplayStatus>`(case
    when ${referrals.status} in ('draft', 'queued', 'withdrawn', 'replied') then ${referrals.status}::text
    when ${referrals.appointmentOn} is not null and ${referrals.appointmentOn} <= ${localDate(now, timeZone)}::date then 'seen'
    when ${referrals.sentAt} is not null and ${referrals.timeFrameDays} is not null
      and ${now} > ${referrals.sentAt} + make_interval(secs => ${referrals.timeFrameDays} * 86400) then 'overdue'
    else ${referrals.status}::text end)`;
}

const dueAt = sql`(${referrals.sentAt} + make_interval(secs => ${referrals.timeFrameDays} * 86400))`;

/**
 * Referrals for the tracking table, with the status shown and the delivery state: every one
 * (newest first) unless a condition, an order and a page are given.
 */
export async function trackingRows(
  now = new Date(),
  opts: { where?: SQL; orderBy?: SQL[]; limit?: number; offset?: number } = {},
) {
  const p = await practice();
  const base = db
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
    .where(opts.where)
    .orderBy(...(opts.orderBy ?? []), desc(referrals.createdAt), asc(referrals.id))
    .$dynamic();
  const rows = await (opts.limit !== undefined ? base.limit(opts.limit).offset(opts.offset ?? 0) : base);
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
  /** Words of the patient's name, phone or e-mail, or a date of birth (the patient search's rules). */
  q?: string;
  sort: TrackingSort | null;
  dir: "asc" | "desc";
  page: number;
  pageSize: number;
};

/**
 * One page of the tracking table, in the database: filtered by the status shown and the
 * patient, sorted (newest first unless a column is chosen; empty values last either way) and
 * cut to the page, with the count of each status for the filter's choices.
 */
export async function trackingPage(q: TrackingQuery, now = new Date()) {
  const p = await practice();
  const status = shownStatus(now, p.timeZone);
  const patientWhere = q.q?.trim() ? (searchCondition(q.q) ?? sql`false`) : undefined;
  const where = and(patientWhere, q.status ? sql`${status} = ${q.status}` : undefined);
  const dir = q.dir === "desc" ? sql`desc nulls last` : sql`asc nulls last`;
  const key: Record<TrackingSort, SQL[]> = {
    reference: [sql`${referrals.id}::text`],
    patient: [sql`lower(${patients.lastName})`, sql`lower(${patients.firstName})`],
    recipient: [sql`${referralRecipients.name}`, sql`${referralRecipients.clinic}`],
    urgency: [
      sql`(case ${referrals.urgency} when 'same_day' then 0 when 'urgent' then 1 when 'soon' then 2 else 3 end)`,
    ],
    status: [status],
    sentOn: [sql`${referrals.sentAt}`],
    dueOn: [dueAt],
    appointmentOn: [sql`${referrals.appointmentOn}`],
  };
  const orderBy = q.sort ? key[q.sort].map((k) => sql`${k} ${dir}`) : [];
  const [rows, countRows] = await Promise.all([
    trackingRows(now, { where, orderBy, limit: q.pageSize, offset: (q.page - 1) * q.pageSize }),
    // Every referral has its patient (a foreign key): the counts join patients only to search them.
    patientWhere
      ? db
          .select({ status, n: count() })
          .from(referrals)
          .innerJoin(patients, eq(patients.id, referrals.patientId))
          .where(patientWhere)
          .groupBy(sql`1`)
      : db
          .select({ status, n: count() })
          .from(referrals)
          .groupBy(sql`1`),
  ]);
  const counts = {} as Record<DisplayStatus, number>;
  let all = 0;
  for (const c of countRows) {
    counts[c.status] = c.n;
    all += c.n;
  }
  return { rows, total: q.status ? (counts[q.status] ?? 0) : all, all, counts };
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
