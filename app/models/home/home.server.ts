/**
 * The staff home page's items, one set per role: what the front desk, an optometrist or the
 * owner acts on today. Every item carries the place where it is acted on; the page only renders.
 * Lists are cut to a few rows, always with the full count and a link to the whole list.
 */
import { sql, type SQL } from "drizzle-orm";
import { practiceSettings } from "~/db/schema";
import { orderLabel } from "~/lib/orders/states";
import { formatLocal, localDayRange, localParts } from "~/lib/scheduling/time";
import { invoiceLabel } from "~/models/billing/invoices.server";
import { takings, todayIn } from "~/models/billing/takings.server";
import { practiceSchedule } from "~/models/schedule/schedule.server";
import { db } from "~/utils/db.server";
import type { SessionUser } from "~/utils/session.server";

/** How many rows a home list shows before "and N more". */
export const HOME_LIST_SIZE = 6;
/** The owner's rates (recalls, referrals, exams to orders) look back this many days. */
export const OWNER_WINDOW_DAYS = 90;

/** The practice's name, time zone and currency for the home page's heading and figures. */
export async function homePractice() {
  const [practice] = await db
    .select({ name: practiceSettings.name, timeZone: practiceSettings.timeZone, currency: practiceSettings.currency })
    .from(practiceSettings)
    .limit(1);
  return practice ?? { name: "Your practice", timeZone: "Europe/London", currency: "GBP" };
}

type Clock = { now: Date; timeZone: string; today: string; start: Date; end: Date };

async function clock(now = new Date()): Promise<Clock> {
  const { timeZone } = await practiceSchedule();
  const today = localParts(now, timeZone).date;
  return { now, timeZone, today, ...localDayRange(today, timeZone) };
}

async function rows<T>(query: SQL): Promise<T[]> {
  return (await db.execute(query)).rows as T[];
}

async function countOf(query: SQL): Promise<number> {
  const [r] = await rows<{ n: string | number }>(query);
  return Number(r?.n ?? 0);
}

export type DayAppointment = {
  id: string;
  patientId: string;
  patientName: string;
  time: string;
  typeName: string;
  providerName: string;
  status: "booked" | "confirmed" | "arrived" | "in_exam" | "completed" | "no_show";
  /** For arrivals: when they arrived (HH:MM). */
  since: string | null;
  /** Booked or confirmed, and its start time has passed. */
  late: boolean;
};

async function dayAppointments(c: Clock, providerId?: string): Promise<DayAppointment[]> {
  const found = await rows<{
    id: string;
    patient_id: string;
    first_name: string;
    last_name: string;
    starts_at: Date;
    status: DayAppointment["status"];
    status_changed_at: Date;
    type_name: string;
    provider_name: string;
  }>(sql`
    select a.id, a.patient_id, p.first_name, p.last_name, a.starts_at, a.status, a.status_changed_at,
      t.name as type_name, u.name as provider_name
    from appointments a
      join patients p on p.id = a.patient_id
      join appointment_types t on t.id = a.appointment_type_id
      join users u on u.id = a.provider_id
    where a.starts_at >= ${c.start} and a.starts_at < ${c.end} and a.status <> 'cancelled'
      ${providerId ? sql`and a.provider_id = ${providerId}::uuid` : sql``}
    order by a.starts_at, p.last_name, p.first_name`);
  return found.map((r) => {
    const startsAt = new Date(r.starts_at);
    return {
      id: r.id,
      patientId: r.patient_id,
      patientName: `${r.first_name} ${r.last_name}`,
      time: formatLocal(startsAt, c.timeZone, { withDate: false }),
      typeName: r.type_name,
      providerName: r.provider_name,
      status: r.status,
      since:
        r.status === "arrived" ? formatLocal(new Date(r.status_changed_at), c.timeZone, { withDate: false }) : null,
      late: (r.status === "booked" || r.status === "confirmed") && startsAt.getTime() < c.now.getTime(),
    };
  });
}

// ------------------------------------------------------------------------------- front desk

/** Today at the front desk: who is waiting, who is still to come, money due, requests, collections, failed e-mails. */
export async function frontDeskHome(now = new Date()) {
  const c = await clock(now);
  const day = await dayAppointments(c);
  const waiting = day.filter((a) => a.status === "arrived");
  const toArrive = day.filter((a) => a.status === "booked" || a.status === "confirmed");

  // Unpaid balances due today: issued, not fully paid invoices of patients who visit today, and
  // any invoice issued today that is still unpaid.
  const dueWhere = sql`i.status in ('open', 'partially_paid') and i.total_minor > i.paid_minor and (
      (i.issued_at >= ${c.start} and i.issued_at < ${c.end})
      or exists (select 1 from appointments a where a.patient_id = i.patient_id and a.status <> 'cancelled'
                 and a.starts_at >= ${c.start} and a.starts_at < ${c.end}))`;
  const [dueCount, dueRows, dueSum] = await Promise.all([
    countOf(sql`select count(*) as n from invoices i where ${dueWhere}`),
    rows<{ id: string; number: number | null; first_name: string; last_name: string; balance: number }>(sql`
      select i.id, i.number, p.first_name, p.last_name, i.total_minor - i.paid_minor as balance
      from invoices i join patients p on p.id = i.patient_id
      where ${dueWhere} order by p.last_name, p.first_name, i.number limit ${HOME_LIST_SIZE}`),
    rows<{ total: string | null }>(
      sql`select sum(i.total_minor - i.paid_minor) as total from invoices i where ${dueWhere}`,
    ),
  ]);

  const [moveCount, moveRows] = await Promise.all([
    countOf(sql`select count(*) as n from appointment_change_requests where status = 'open'`),
    rows<{
      id: string;
      appointment_id: string;
      first_name: string;
      last_name: string;
      starts_at: Date;
      message: string;
    }>(sql`
      select r.id, r.appointment_id, p.first_name, p.last_name, a.starts_at, r.message
      from appointment_change_requests r join appointments a on a.id = r.appointment_id join patients p on p.id = r.patient_id
      where r.status = 'open' order by r.created_at limit ${HOME_LIST_SIZE}`),
  ]);

  const [readyCount, readyRows] = await Promise.all([
    countOf(sql`select count(*) as n from optical_orders where state = 'ready_to_collect'`),
    rows<{
      id: string;
      number: number;
      kind: string;
      first_name: string;
      last_name: string;
      state_changed_at: Date;
    }>(sql`
      select o.id, o.number, o.kind, p.first_name, p.last_name, o.state_changed_at
      from optical_orders o join patients p on p.id = o.patient_id
      where o.state = 'ready_to_collect' order by o.state_changed_at limit ${HOME_LIST_SIZE}`),
  ]);

  // E-mails that failed: appointment messages and recalls (the messages page), referral letters (their referral).
  const failedUnion = sql`
    select m.id, 'appointment' as source, m.kind::text as kind, m.last_error as error, m.created_at,
      p.first_name, p.last_name, null::uuid as referral_id
    from appointment_messages m join appointments a on a.id = m.appointment_id join patients p on p.id = a.patient_id
    where m.status = 'failed'
    union all
    select m.id, 'recall', 'recall', m.last_error, m.created_at, p.first_name, p.last_name, null::uuid
    from recall_messages m join patients p on p.id = m.patient_id where m.status = 'failed'
    union all
    select m.id, 'referral', m.kind::text, m.last_error, m.created_at, p.first_name, p.last_name, r.id
    from referral_messages m join referrals r on r.id = m.referral_id join patients p on p.id = r.patient_id
    where m.status = 'failed'`;
  const [failedCount, failedRows] = await Promise.all([
    countOf(sql`select count(*) as n from (${failedUnion}) f`),
    rows<{
      id: string;
      source: "appointment" | "recall" | "referral";
      kind: string;
      error: string | null;
      created_at: Date;
      first_name: string;
      last_name: string;
      referral_id: string | null;
    }>(sql`select * from (${failedUnion}) f order by f.created_at desc limit ${HOME_LIST_SIZE}`),
  ]);

  return {
    role: "receptionist" as const,
    today: c.today,
    timeZone: c.timeZone,
    waiting,
    toArrive,
    dayTotal: day.length,
    balancesDue: {
      total: dueCount,
      sumMinor: Number(dueSum[0]?.total ?? 0),
      rows: dueRows.map((r) => ({
        id: r.id,
        label: invoiceLabel(r.number),
        patientName: `${r.first_name} ${r.last_name}`,
        balanceMinor: Number(r.balance),
      })),
    },
    moveRequests: {
      total: moveCount,
      rows: moveRows.map((r) => ({
        id: r.id,
        appointmentId: r.appointment_id,
        patientName: `${r.first_name} ${r.last_name}`,
        visitAt: formatLocal(new Date(r.starts_at), c.timeZone),
        message: r.message,
      })),
    },
    readyToCollect: {
      total: readyCount,
      rows: readyRows.map((r) => ({
        id: r.id,
        label: orderLabel(r.number),
        kind: r.kind === "spectacles" ? "Spectacles" : "Contact lenses",
        patientName: `${r.first_name} ${r.last_name}`,
        readySince: formatLocal(new Date(r.state_changed_at), c.timeZone),
      })),
    },
    failedMessages: {
      total: failedCount,
      rows: failedRows.map((r) => ({
        id: r.id,
        source: r.source,
        what: MESSAGE_WORDS[`${r.source}:${r.kind}`] ?? "E-mail",
        patientName: `${r.first_name} ${r.last_name}`,
        error: r.error,
        at: formatLocal(new Date(r.created_at), c.timeZone),
        href: r.referral_id ? `/referrals/${r.referral_id}` : "/schedule/messages?status=failed",
      })),
    },
  };
}

const MESSAGE_WORDS: Record<string, string> = {
  "appointment:confirmation": "Booking confirmation",
  "appointment:reminder": "Appointment reminder",
  "appointment:cancellation": "Cancellation notice",
  "appointment:update": "Appointment change notice",
  "recall:recall": "Recall",
  "referral:letter": "Referral letter",
  "referral:chase": "Referral reminder to the recipient",
  "referral:reply_notice": "Referral reply notice",
};

// ----------------------------------------------------------------------------- optometrist

/** Today for one optometrist: their own list and next patient, unsigned exams, replies and results to read. */
export async function optometristHome(user: Pick<SessionUser, "id">, now = new Date()) {
  const c = await clock(now);
  const day = await dayAppointments(c, user.id);
  const inChair = day.find((a) => a.status === "in_exam") ?? null;
  // Next: whoever has arrived and waits longest by booked time, else the next booked visit still to come.
  const next =
    day.find((a) => a.status === "arrived") ??
    day.find((a) => (a.status === "booked" || a.status === "confirmed") && !a.late) ??
    day.find((a) => a.status === "booked" || a.status === "confirmed") ??
    null;

  const [unsignedCount, unsignedRows] = await Promise.all([
    countOf(sql`select count(*) as n from exams where optometrist_id = ${user.id}::uuid and status = 'in_progress'`),
    rows<{ id: string; patient_id: string; first_name: string; last_name: string; examined_at: Date }>(sql`
      select e.id, e.patient_id, p.first_name, p.last_name, e.examined_at
      from exams e join patients p on p.id = e.patient_id
      where e.optometrist_id = ${user.id}::uuid and e.status = 'in_progress'
      order by e.examined_at limit ${HOME_LIST_SIZE}`),
  ]);

  const repliesWhere = sql`x.read_at is null and r.created_by_id = ${user.id}::uuid`;
  const [replyCount, replyRows] = await Promise.all([
    countOf(
      sql`select count(*) as n from referral_replies x join referrals r on r.id = x.referral_id where ${repliesWhere}`,
    ),
    rows<{
      id: string;
      referral_id: string;
      author_name: string;
      first_name: string;
      last_name: string;
      created_at: Date;
    }>(
      sql`
      select x.id, x.referral_id, x.author_name, p.first_name, p.last_name, x.created_at
      from referral_replies x join referrals r on r.id = x.referral_id join patients p on p.id = x.patient_id
      where ${repliesWhere} order by x.created_at limit ${HOME_LIST_SIZE}`,
    ),
  ]);

  // Results colleagues attached to this optometrist's exams that nobody has marked reviewed yet.
  const resultsWhere = sql`e.optometrist_id = ${user.id}::uuid and d.uploaded_by_id <> ${user.id}::uuid
    and d.reviewed_at is null`;
  const [resultCount, resultRows] = await Promise.all([
    countOf(sql`select count(*) as n from documents d join exams e on e.id = d.exam_id where ${resultsWhere}`),
    rows<{
      id: string;
      kind: string;
      description: string;
      original_name: string;
      exam_id: string;
      patient_id: string;
      first_name: string;
      last_name: string;
      uploaded_by: string;
      created_at: Date;
    }>(sql`
      select d.id, d.kind, d.description, d.original_name, d.exam_id, d.patient_id, p.first_name, p.last_name,
        u.name as uploaded_by, d.created_at
      from documents d join exams e on e.id = d.exam_id join patients p on p.id = d.patient_id
        join users u on u.id = d.uploaded_by_id
      where ${resultsWhere} order by d.created_at desc limit ${HOME_LIST_SIZE}`),
  ]);

  const KIND: Record<string, string> = {
    fundus_photo: "Fundus photo",
    field_printout: "Field printout",
    outside_record: "Outside record",
    other: "Document",
  };
  return {
    role: "optometrist" as const,
    today: c.today,
    timeZone: c.timeZone,
    appointments: day,
    next,
    inChair,
    unsignedExams: {
      total: unsignedCount,
      rows: unsignedRows.map((r) => ({
        id: r.id,
        patientId: r.patient_id,
        patientName: `${r.first_name} ${r.last_name}`,
        examinedAt: formatLocal(new Date(r.examined_at), c.timeZone),
      })),
    },
    replies: {
      total: replyCount,
      rows: replyRows.map((r) => ({
        id: r.id,
        referralId: r.referral_id,
        authorName: r.author_name,
        patientName: `${r.first_name} ${r.last_name}`,
        receivedAt: formatLocal(new Date(r.created_at), c.timeZone),
      })),
    },
    results: {
      total: resultCount,
      rows: resultRows.map((r) => ({
        id: r.id,
        what: r.description || KIND[r.kind] || r.original_name,
        kind: KIND[r.kind] ?? "Document",
        href: `/patients/${r.patient_id}/exams/${r.exam_id}#document-${r.id}`,
        patientName: `${r.first_name} ${r.last_name}`,
        uploadedBy: r.uploaded_by,
        at: formatLocal(new Date(r.created_at), c.timeZone),
      })),
    },
  };
}

// ---------------------------------------------------------------------------------- owner

/** A share as counts; the percentage is null when there is nothing to divide by. */
export type Share = { part: number; whole: number; percent: number | null };
const share = (part: number, whole: number): Share => ({
  part,
  whole,
  percent: whole > 0 ? Math.round((part / whole) * 100) : null,
});

/** The owner's figures: takings, visits kept and missed, recall response, referral turnaround, exams that led to an order. */
export async function ownerHome(now = new Date()) {
  const c = await clock(now);
  const day = todayIn(c.timeZone, c.now);
  const month = day.slice(0, 7);
  const [dayTakings, monthTakings] = await Promise.all([
    takings({ kind: "day", day }),
    takings({ kind: "month", month }),
  ]);
  const monthStart = localDayRange(`${month}-01`, c.timeZone).start;

  // Visits this month up to now that were due to have happened: kept (completed) against no-shows.
  const [visits] = await rows<{ kept: string; no_show: string; cancelled: string }>(sql`
    select count(*) filter (where status = 'completed') as kept,
           count(*) filter (where status = 'no_show') as no_show,
           count(*) filter (where status = 'cancelled') as cancelled
    from appointments where starts_at >= ${monthStart} and starts_at < ${c.now}`);

  const windowStart = new Date(c.now.getTime() - OWNER_WINDOW_DAYS * 86_400_000);
  // Recall response: recall e-mails sent in the window whose patient booked a visit after it.
  const [recalls] = await rows<{ sent: string; booked: string }>(sql`
    select count(*) as sent,
      count(*) filter (where exists (
        select 1 from appointments a where a.patient_id = m.patient_id and a.created_at >= m.sent_at and a.status <> 'cancelled'
      )) as booked
    from recall_messages m where m.status = 'sent' and m.sent_at >= ${windowStart}`);

  // Referral turnaround: letters sent in the window; days from sending to acknowledgement and to reply.
  const [referralTimes] = await rows<{
    sent: string;
    acknowledged: string;
    replied: string;
    ack_median: number | null;
    reply_median: number | null;
  }>(sql`
    select count(*) as sent,
      count(coalesce(acknowledged_at, replied_at)) as acknowledged,
      count(replied_at) as replied,
      percentile_cont(0.5) within group (order by extract(epoch from coalesce(acknowledged_at, replied_at) - sent_at) / 86400)
        filter (where coalesce(acknowledged_at, replied_at) is not null) as ack_median,
      percentile_cont(0.5) within group (order by extract(epoch from replied_at - sent_at) / 86400)
        filter (where replied_at is not null) as reply_median
    from referrals where sent_at >= ${windowStart} and status <> 'withdrawn'`);

  // Exams signed in the window that led to an optical order (through a prescription issued from them).
  const [examOrders] = await rows<{ exams: string; ordered: string }>(sql`
    select count(*) as exams,
      count(*) filter (where exists (
        select 1 from optical_orders o join prescriptions rx on rx.id = o.prescription_id
        where rx.exam_id = e.id and o.state <> 'cancelled'
      )) as ordered
    from exams e where e.status = 'signed' and e.signed_at >= ${windowStart}`);

  const kept = Number(visits?.kept ?? 0);
  const noShow = Number(visits?.no_show ?? 0);
  const days = (v: number | null) => (v === null ? null : Math.round(Number(v) * 10) / 10);
  return {
    role: "owner" as const,
    today: c.today,
    timeZone: c.timeZone,
    month,
    windowDays: OWNER_WINDOW_DAYS,
    currency: dayTakings.currency,
    takings: {
      day: { netMinor: dayTakings.totals.netMinor, payments: dayTakings.byMethod.reduce((a, m) => a + m.count, 0) },
      month: {
        netMinor: monthTakings.totals.netMinor,
        payments: monthTakings.byMethod.reduce((a, m) => a + m.count, 0),
      },
    },
    visits: { kept, noShow, cancelled: Number(visits?.cancelled ?? 0), keptShare: share(kept, kept + noShow) },
    recalls: share(Number(recalls?.booked ?? 0), Number(recalls?.sent ?? 0)),
    referrals: {
      sent: Number(referralTimes?.sent ?? 0),
      acknowledged: Number(referralTimes?.acknowledged ?? 0),
      replied: Number(referralTimes?.replied ?? 0),
      medianDaysToAcknowledge: days(referralTimes?.ack_median ?? null),
      medianDaysToReply: days(referralTimes?.reply_median ?? null),
    },
    examsToOrders: share(Number(examOrders?.ordered ?? 0), Number(examOrders?.exams ?? 0)),
  };
}

export type FrontDeskHome = Awaited<ReturnType<typeof frontDeskHome>>;
export type OptometristHome = Awaited<ReturnType<typeof optometristHome>>;
export type OwnerHome = Awaited<ReturnType<typeof ownerHome>>;
