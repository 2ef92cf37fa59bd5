/**
 * Recalls: patients due for their routine exam, and the bulk recall e-mails the front desk sends.
 * Due dates come from app/lib/scheduling/recall.ts (the exam's planned interval, the visit
 * type's, else the practice's default by age). One recall_messages row per patient and due date: never two for the same date.
 */
import { formatDate } from "~/lib/format";
import { dateTimeFormat } from "~/lib/format/intl";
import { and, count, eq, gt, inArray, sql } from "drizzle-orm";
import { appointments, patients, recallBatches, recallMessages, sites } from "~/db/schema";
import { recallDueDate, ageOn, type RecallRule } from "~/lib/scheduling/recall";
import { formatLocal, localParts } from "~/lib/scheduling/time";
import { audit } from "~/utils/audit.server";
import { db } from "~/utils/db.server";
import { defineJob } from "~/utils/jobs.server";
import {
  absoluteUrl,
  practiceReplyAddress,
  prepareMail,
  sendMail,
  unsubscribeUrl,
  type Mail,
} from "~/utils/mail.server";
import { mailRetryOptions } from "./reminders.server";
import { practiceSchedule } from "./schedule-settings.server";
import { siteAddress } from "./sites.server";
import type { SessionUser } from "~/utils/session.server";

export const RECALL_MAIL_QUEUE = "recall-mail";

export type RecallRow = {
  patientId: string;
  name: string;
  dateOfBirth: string;
  age: number;
  email: string | null;
  /** The patient accepts recall e-mails (their own choice, apart from appointment reminders). */
  recallsByEmail: boolean;
  lastVisit: string;
  lastVisitType: string;
  dueDate: string;
  months: number;
  rule: RecallRule;
  /** Where the recall asks the patient to come: the site of their last visit, else the default site. */
  siteId: string;
  siteName: string;
  nextBooked: string | null;
  lastRecall: {
    status: string;
    at: string;
    /** The day it was sent (or skipped or failed), in the practice's zone: "9 Mar 2027". */
    on: string;
    batchId: string | null;
    skippedReason: string | null;
  } | null;
};

export type RecallFilters = {
  /** Due on or after this day (none: every overdue patient too). */
  dueFrom?: string;
  dueBy?: string;
  group?: "all" | "child" | "adult";
  includeBooked?: boolean;
  includeRecalled?: boolean;
  /** Patients recalled in this batch stay listed (with their recall's state) whatever the other filters say. */
  keepBatch?: string;
};

/** Every patient seen for a routine exam, with the due date of their next one. */
async function allRecalls(patientIds?: string[]): Promise<RecallRow[]> {
  const settings = await practiceSchedule();
  const today = localParts(new Date(), settings.timeZone).date;
  const idFilter = patientIds?.length
    ? sql`and p.id in (${sql.join(
        patientIds.map((id) => sql`${id}::uuid`),
        sql`, `,
      )})`
    : sql``;
  const result = await db.execute<{
    patient_id: string;
    first_name: string;
    last_name: string;
    date_of_birth: string;
    email: string | null;
    recalls_by_email: boolean;
    last_visit: Date;
    type_name: string;
    recall_months: number | null;
    plan_months: number | null;
    next_booked: Date | null;
    recall_status: string | null;
    recall_batch: string | null;
    recall_skipped: string | null;
    recall_at: Date | null;
    recall_due: string | null;
    site_id: string;
    site_name: string;
  }>(sql`
    select p.id as patient_id, p.first_name, p.last_name, p.date_of_birth::text as date_of_birth, p.email, p.recalls_by_email,
           lv.starts_at as last_visit, lv.type_name, lv.recall_months, lv.plan_months,
           (select min(a2.starts_at) from appointments a2
             where a2.patient_id = p.id and a2.starts_at > now() and a2.status in ('booked', 'confirmed')) as next_booked,
           rm.status::text as recall_status, rm.batch_id as recall_batch, rm.skipped_reason as recall_skipped, coalesce(rm.sent_at, rm.created_at) as recall_at, rm.due_date::text as recall_due,
           s.id as site_id, s.name as site_name
      from patients p
      join lateral (
        -- The latest routine visit: a completed appointment of a routine type, or an exam
        -- (recorded with or without an appointment); the exam's plan may set the interval.
        select v.starts_at, v.type_name, v.recall_months, v.plan_months from (
          select a.starts_at, t.name as type_name, t.recall_months, ea.recall_months as plan_months
            from appointments a
            join appointment_types t on t.id = a.appointment_type_id
            left join exams e on e.appointment_id = a.id
            left join exam_assessment ea on ea.exam_id = e.id
           where a.patient_id = p.id and a.status = 'completed' and t.routine_exam
          union all
          select e.examined_at, 'Eye exam', null, ea.recall_months
            from exams e left join exam_assessment ea on ea.exam_id = e.id
           where e.patient_id = p.id and e.appointment_id is null
        ) v order by v.starts_at desc limit 1) lv on true
      left join lateral (
        select r.status, r.sent_at, r.created_at, r.due_date, r.batch_id, r.skipped_reason from recall_messages r
         where r.patient_id = p.id order by r.created_at desc limit 1) rm on true
      -- The site of the patient's last visit (one that took place), else the default site.
      left join lateral (
        select a4.site_id from appointments a4
         where a4.patient_id = p.id and a4.status in ('arrived', 'in_exam', 'completed') and a4.starts_at <= now()
         order by a4.starts_at desc limit 1) ls on true
      join sites s on s.id = coalesce(ls.site_id, default_site_id())
     where true ${idFilter}`);
  return result.rows.map((r) => {
    const examDate = localParts(new Date(r.last_visit), settings.timeZone).date;
    const due = recallDueDate(
      { planRecallMonths: r.plan_months, typeRecallMonths: r.recall_months, dateOfBirth: r.date_of_birth, examDate },
      settings,
    );
    const recalledForThisDue = r.recall_due === due.dueDate;
    return {
      patientId: r.patient_id,
      name: `${r.first_name} ${r.last_name}`,
      dateOfBirth: r.date_of_birth,
      age: ageOn(r.date_of_birth, today),
      email: r.email,
      recallsByEmail: r.recalls_by_email,
      lastVisit: examDate,
      lastVisitType: r.type_name,
      dueDate: due.dueDate,
      months: due.months,
      rule: due.rule,
      siteId: r.site_id,
      siteName: r.site_name,
      nextBooked: r.next_booked ? formatLocal(new Date(r.next_booked), settings.timeZone) : null,
      lastRecall:
        recalledForThisDue && r.recall_status
          ? {
              status: r.recall_status,
              at: new Date(r.recall_at!).toISOString(),
              on: formatDate(new Date(r.recall_at!), { timeZone: settings.timeZone }),
              batchId: r.recall_batch,
              skippedReason: r.recall_skipped,
            }
          : null,
    };
  });
}

/** The recall list: due on or before `dueBy` (default: today plus 30 days), filtered, soonest first. */
export async function recallList(filters: RecallFilters = {}) {
  const settings = await practiceSchedule();
  const today = localParts(new Date(), settings.timeZone).date;
  const dueBy = filters.dueBy ?? today;
  const rows = (await allRecalls()).filter((r) => {
    if (filters.keepBatch && r.lastRecall?.batchId === filters.keepBatch) return true;
    if (r.dueDate > dueBy) return false;
    if (filters.dueFrom && r.dueDate < filters.dueFrom) return false;
    if (!filters.includeBooked && r.nextBooked) return false;
    if (!filters.includeRecalled && r.lastRecall) return false;
    const child = r.age < settings.childUnderYears;
    if (filters.group === "child" && !child) return false;
    if (filters.group === "adult" && child) return false;
    return true;
  });
  rows.sort((a, b) => a.dueDate.localeCompare(b.dueDate) || a.name.localeCompare(b.name));
  return { rows, today, dueBy, settings };
}

/** Starts a bulk send: one recall row and one job per patient not yet recalled for this due date. */
export async function startRecallBatch(actor: SessionUser, patientIds: string[], request?: Request) {
  const due = await allRecalls(patientIds);
  return db.transaction(async (tx) => {
    const [batch] = await tx.insert(recallBatches).values({ createdById: actor.id }).returning();
    const inserted = due.length
      ? await tx
          .insert(recallMessages)
          .values(
            due.map((r) => ({ batchId: batch!.id, patientId: r.patientId, dueDate: r.dueDate, siteId: r.siteId })),
          )
          .onConflictDoNothing()
          .returning({ id: recallMessages.id })
      : [];
    await tx.update(recallBatches).set({ total: inserted.length }).where(eq(recallBatches.id, batch!.id));
    for (const m of inserted)
      await recallMail.enqueue({ recallId: m.id }, { tx, singletonKey: m.id, ...mailRetryOptions() });
    await audit(
      {
        action: "recall.batch_started",
        actorUserId: actor.id,
        entityType: "recall_batch",
        entityId: batch!.id,
        detail: { requested: patientIds.length, queued: inserted.length },
        request,
      },
      tx,
    );
    return {
      batchId: batch!.id,
      total: inserted.length,
      alreadyRecalled: due.length - inserted.length,
      notDue: patientIds.length - due.length,
    };
  });
}

/** Progress of a batch: how many of its recalls are sent, skipped, failed or still queued. */
export async function batchProgress(batchId: string) {
  const [batch] = await db.select().from(recallBatches).where(eq(recallBatches.id, batchId));
  if (!batch) return null;
  const rows = await db
    .select({ status: recallMessages.status, n: count() })
    .from(recallMessages)
    .where(eq(recallMessages.batchId, batchId))
    .groupBy(recallMessages.status);
  const by = Object.fromEntries(rows.map((r) => [r.status, r.n])) as Record<string, number>;
  const done = (by.sent ?? 0) + (by.skipped ?? 0) + (by.failed ?? 0);
  return {
    batchId,
    total: batch.total,
    sent: by.sent ?? 0,
    skipped: by.skipped ?? 0,
    failed: by.failed ?? 0,
    queued: by.queued ?? 0,
    done,
    finished: done >= batch.total,
  };
}

type Sender = (mail: Mail) => Promise<unknown>;
let sender: Sender = sendMail;
export function useRecallMailSender(next: Sender | null) {
  sender = next ?? sendMail;
}

/**
 * How the patient can book, in words: a reply is invited only when replies reach the practice
 * (its own address as Reply-To, never a no-reply sender); the portal is always offered.
 */
export function howToBook(phone: string | null | undefined, replyTo: string | null) {
  const ways = [
    phone ? `call us on ${phone}` : null,
    replyTo ? `reply to this e-mail (it reaches ${replyTo})` : null,
    `book online in your patient portal: ${absoluteUrl("/portal/book")}`,
  ].filter(Boolean) as string[];
  return `To book, ${ways.length > 1 ? `${ways.slice(0, -1).join(", ")} or ${ways.at(-1)}` : ways[0]}.`;
}

/** The job: send one recall e-mail at most once. */
export async function deliverRecall(
  recallId: string,
  job: { retryCount: number; retryLimit: number } = { retryCount: 0, retryLimit: 0 },
) {
  const settings = await practiceSchedule();
  try {
    return await db.transaction(async (tx) => {
      const [row] = await tx
        .select({
          recall: recallMessages,
          firstName: patients.firstName,
          lastName: patients.lastName,
          email: patients.email,
          recallsByEmail: patients.recallsByEmail,
          site: sites,
        })
        .from(recallMessages)
        .innerJoin(patients, eq(patients.id, recallMessages.patientId))
        .innerJoin(sites, eq(sites.id, recallMessages.siteId))
        .where(eq(recallMessages.id, recallId))
        .for("update", { of: recallMessages });
      if (!row || row.recall.status === "sent" || row.recall.status === "skipped") return "already done" as const;
      const skip = !row.recallsByEmail
        ? "patient opted out of recall e-mails"
        : !row.email
          ? "no e-mail address on record"
          : null;
      if (skip) {
        await tx
          .update(recallMessages)
          .set({ status: "skipped", skippedReason: skip })
          .where(eq(recallMessages.id, recallId));
        return "skipped" as const;
      }
      const [booked] = await tx
        .select({ id: appointments.id })
        .from(appointments)
        .where(
          and(
            eq(appointments.patientId, row.recall.patientId),
            gt(appointments.startsAt, new Date()),
            inArray(appointments.status, ["booked", "confirmed"]),
          ),
        )
        .limit(1);
      if (booked) {
        await tx
          .update(recallMessages)
          .set({ status: "skipped", skippedReason: "already booked" })
          .where(eq(recallMessages.id, recallId));
        return "skipped" as const;
      }
      const due = dateTimeFormat("en-GB", { dateStyle: "long", timeZone: "UTC" }).format(
        new Date(`${row.recall.dueDate}T00:00:00Z`),
      );
      const site = row.site;
      const phoneNumber = site.phone || settings.phone;
      const replyTo = await practiceReplyAddress();
      const address = siteAddress(site);
      const where = `${settings.name}, ${site.name}${address ? `, ${address}` : ""}`;
      const optOut = unsubscribeUrl(row.recall.patientId, "recalls");
      await sender(
        await prepareMail({
          to: row.email!,
          subject: `Your eye examination is due (${due})`,
          text: `Dear ${row.firstName} ${row.lastName},\n\nOur records show that your routine eye examination is due on ${due}. Regular exams check your sight and the health of your eyes, even when you notice no change.\n\nWe look forward to seeing you at ${where}. ${howToBook(phoneNumber, replyTo)}\n\n${settings.name} · ${site.name}${address ? `\n${address}` : ""}${phoneNumber ? `\n${phoneNumber}` : ""}\n\nIf you would rather not receive these e-mails, you can stop them here: ${optOut}\n`,
          unsubscribe: { patientId: row.recall.patientId, list: "recalls" },
        }),
      );
      await tx
        .update(recallMessages)
        .set({
          status: "sent",
          sentAt: new Date(),
          recipient: row.email,
          attempts: row.recall.attempts + 1,
          lastError: null,
        })
        .where(eq(recallMessages.id, recallId));
      return "sent" as const;
    });
  } catch (error) {
    const last = job.retryCount >= job.retryLimit;
    await db
      .update(recallMessages)
      .set({
        attempts: job.retryCount + 1,
        lastError: (error as Error).message.slice(0, 500),
        status: last ? "failed" : "queued",
      })
      .where(and(eq(recallMessages.id, recallId), eq(recallMessages.status, "queued")));
    throw error;
  }
}

export const recallMail = defineJob<{ recallId: string }>(
  RECALL_MAIL_QUEUE,
  async (data, job) => {
    await deliverRecall(data.recallId, job);
  },
  { retryLimit: 10, retryDelay: 30, retryBackoff: true, expireInSeconds: 120 },
);
