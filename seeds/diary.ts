/**
 * The demo practice's working diary, built around today in the practice's time zone: the last
 * week's visits (kept or missed, each kept exam signed and linked to its appointment), today's
 * full lists with the states the time of day implies (seen, in the chair, waiting, still to
 * come) and the coming fortnight mostly booked. Every person is a fictional caseload patient.
 *
 * Rebuilding is idempotent: the diary's own appointments (marked by DIARY_NOTE) from a week ago
 * onwards are removed with the exams made for them, then built again for the current day, around
 * any other appointment already in the diary. Older diary visits stay as history.
 */
import { sql } from "drizzle-orm";
import type { NodePgDatabase } from "drizzle-orm/node-postgres";
import * as schema from "../app/db/schema";
import { addDays, localParts, wallTimeToInstant, weekdayOf } from "../app/lib/scheduling/time";
import { CASELOAD_DOMAIN, GENERAL_LAST_NAMES, prng } from "./caseload";

type Tx = Parameters<Parameters<NodePgDatabase<typeof schema>["transaction"]>[0]>[0];

export const DIARY_NOTE = "demo day list";
/** Calendar days of past visits rebuilt, and days ahead that are booked. */
export const DIARY_DAYS_BACK = 7;
export const DIARY_DAYS_AHEAD = 14;
const MINUTE = 60_000;

type Status = "booked" | "confirmed" | "arrived" | "in_exam" | "completed" | "no_show";
type Planned = {
  patientId: string;
  providerId: string;
  typeId: string;
  typeName: string;
  siteId: string;
  roomId: string | null;
  start: Date;
  end: Date;
  status: Status;
  bookedAt: Date;
  sourceExamId: string | null;
  iopMinute: number;
  email: string | null;
};

/** The tables copied from the patient's previous exam into a diary exam (their exam_id column is remapped). */
const COPIED = [
  "exam_refractions",
  "exam_acuity",
  "exam_iop",
  "exam_discs",
  "exam_pupils",
  "exam_red_flags",
  "exam_diagnoses",
  "exam_anterior_chamber",
  "exam_fundus",
] as const;

const rows = <T>(r: { rows: unknown[] }) => r.rows as T[];

export async function buildDiary(tx: Tx, now = new Date()) {
  const [settings] = rows<{ tz: string }>(
    await tx.execute(sql`select time_zone as tz from practice_settings where id = 1`),
  );
  if (!settings) return { appointments: 0 };
  const tz = settings.tz;
  const today = localParts(now, tz).date;
  const from = addDays(today, -DIARY_DAYS_BACK);
  const fromInstant = wallTimeToInstant(from, 0, tz)!;

  // 1. Take down the diary's own rows from a week ago on (exams nobody has built on, then appointments).
  await tx.execute(sql`
    delete from exams e using appointments a
    where e.appointment_id = a.id and a.notes = ${DIARY_NOTE} and a.starts_at >= ${fromInstant}
      and not exists (select 1 from prescriptions p where p.exam_id = e.id)
      and not exists (select 1 from referrals r where r.exam_id = e.id)`);
  await tx.execute(sql`delete from appointments where notes = ${DIARY_NOTE} and starts_at >= ${fromInstant}`);

  const providers = rows<{ id: string }>(
    await tx.execute(sql`select id from users where role in ('owner', 'optometrist') and active order by role, email`),
  );
  const types = rows<{ id: string; name: string; minutes: number }>(
    await tx.execute(sql`select id, name, duration_minutes as minutes from appointment_types`),
  );
  const type = (name: string) => types.find((t) => t.name === name);
  const hours = rows<{
    provider: string;
    weekday: number;
    start: number;
    end: number;
    site: string;
    room: string | null;
  }>(
    await tx.execute(sql`select provider_id as provider, weekday, start_minute as start, end_minute as end,
      site_id as site, room_id as room from working_hours`),
  );
  const breaks = rows<{ provider: string; weekday: number; start: number; end: number }>(
    await tx.execute(
      sql`select provider_id as provider, weekday, start_minute as start, end_minute as end from provider_breaks`,
    ),
  );
  const opening = rows<{ site: string; weekday: number; start: number; end: number }>(
    await tx.execute(
      sql`select site_id as site, weekday, start_minute as start, end_minute as end from site_opening_hours`,
    ),
  );
  const closed = rows<{ site: string | null; provider: string | null; startsOn: string; endsOn: string }>(
    await tx.execute(sql`select site_id as site, provider_id as provider, starts_on::text as "startsOn",
      ends_on::text as "endsOn" from closures where ends_on >= ${from}`),
  );
  const taken = rows<{ provider: string; start: string; end: string }>(
    await tx.execute(sql`select provider_id as provider, starts_at as start, ends_at as end from appointments
      where status not in ('cancelled', 'no_show') and ends_at >= ${fromInstant}`),
  ).map((a) => ({ provider: a.provider, start: new Date(a.start), end: new Date(a.end) }));
  // The caseload's ordinary patients (never the named cases the demo and its tests walk through),
  // with their latest signed exam, age and whether they wear contact lenses.
  const pool = rows<{
    id: string;
    dob: string;
    email: string | null;
    lastExam: string | null;
    lenses: boolean;
  }>(
    await tx.execute(sql`
      select p.id, p.date_of_birth::text as dob, p.email,
        (select e.id from exams e where e.patient_id = p.id and e.status = 'signed'
          order by e.examined_at desc limit 1) as "lastExam",
        exists (select 1 from prescriptions r where r.patient_id = p.id and r.kind = 'contact_lens') as lenses
      from patients p
      where p.email like ${"%@" + CASELOAD_DOMAIN} and p.last_name = any(${sql.raw(
        `array[${GENERAL_LAST_NAMES.map((n) => `'${n.replace(/'/g, "''")}'`).join(",")}]`,
      )})
        and not exists (select 1 from appointments a where a.patient_id = p.id and a.starts_at >= ${fromInstant}
          and a.notes <> ${DIARY_NOTE} and a.status not in ('cancelled'))
      order by p.last_name, p.first_name, p.id`),
  );
  if (!providers.length || !pool.length || !type("Comprehensive eye exam")) return { appointments: 0 };

  const rand = prng(Number(today.replaceAll("-", "")));
  const shuffled = [...pool];
  for (let i = shuffled.length - 1; i > 0; i--) {
    const j = Math.floor(rand() * (i + 1));
    [shuffled[i], shuffled[j]] = [shuffled[j]!, shuffled[i]!];
  }
  // Visits up to today go to patients with a previous exam to carry forward; later ones to anyone.
  const seen = shuffled.filter((p) => p.lastExam);
  const later = [...shuffled.filter((p) => !p.lastExam), ...seen.slice().reverse()];
  let seenAt = 0;
  let laterAt = 0;
  const used = new Set<string>();
  const nextPatient = (past: boolean) => {
    const list = past ? seen : later;
    for (let k = 0; k < list.length; k++) {
      const p = list[(past ? seenAt++ : laterAt++) % list.length]!;
      if (!used.has(p.id)) {
        used.add(p.id);
        return p;
      }
    }
    return list[Math.floor(rand() * list.length)]!;
  };
  const nowMinute = localParts(now, tz).minute;

  const planned: Planned[] = [];
  for (let offset = -DIARY_DAYS_BACK; offset <= DIARY_DAYS_AHEAD; offset++) {
    const day = addDays(today, offset);
    const weekday = weekdayOf(day);
    for (const provider of providers) {
      const work = hours.find((h) => h.provider === provider.id && h.weekday === weekday);
      if (!work) continue;
      const open = opening.find((o) => o.site === work.site && o.weekday === weekday);
      if (!open) continue;
      const shut = closed.some(
        (c) =>
          c.startsOn <= day &&
          c.endsOn >= day &&
          (c.site === null || c.site === work.site) &&
          (c.provider === null || c.provider === provider.id),
      );
      if (shut) continue;
      const dayStart = Math.max(work.start, open.start);
      const dayEnd = Math.min(work.end, open.end);
      const pauses = breaks.filter((b) => b.provider === provider.id && b.weekday === weekday);
      // Ahead, the diary thins out: nearly full tomorrow, about two thirds full in a fortnight.
      const fill = offset <= 0 ? 1 : 0.95 - 0.022 * offset;
      let minute = dayStart;
      let slot = 0;
      while (minute < dayEnd) {
        const inPause = pauses.find((b) => minute >= b.start && minute < b.end);
        if (inPause) {
          minute = inPause.end;
          continue;
        }
        const past = offset < 0 || (offset === 0 && minute < nowMinute + 30);
        const patient = nextPatient(past);
        const age = (Date.parse(day) - Date.parse(patient.dob)) / (365.25 * 864e5);
        const t =
          slot % 7 === 5 && age >= 16
            ? type("Spectacle collection")
            : age < 16
              ? type("Child eye exam")
              : patient.lenses && slot % 2 === 0
                ? type("Contact lens check")
                : type("Comprehensive eye exam");
        slot++;
        if (!t) break;
        const end = minute + t.minutes;
        const clash = pauses.some((b) => minute < b.end && end > b.start) || end > dayEnd;
        const start = wallTimeToInstant(day, minute, tz);
        const finish = wallTimeToInstant(day, end, tz);
        const busy =
          start && finish && taken.some((a) => a.provider === provider.id && a.start < finish && a.end > start);
        if (clash || !start || !finish) {
          used.delete(patient.id);
          minute += 5;
          continue;
        }
        if (busy || rand() > fill) {
          used.delete(patient.id);
          minute = end;
          continue;
        }
        planned.push({
          patientId: patient.id,
          providerId: provider.id,
          typeId: t.id,
          typeName: t.name,
          siteId: work.site,
          roomId: work.room,
          start,
          end: finish,
          status: "booked",
          bookedAt: new Date(start.getTime() - (5 + Math.floor(rand() * 40)) * 864e5),
          sourceExamId: patient.lastExam,
          iopMinute: minute + 6 + Math.floor(rand() * Math.max(1, t.minutes - 12)),
          email: patient.email,
        });
        minute = end;
      }
    }
  }

  // 2. States as the time of day implies.
  const inChair = new Set<string>();
  for (const p of planned.sort((a, b) => a.start.getTime() - b.start.getTime())) {
    const exam = p.typeName !== "Spectacle collection";
    if (p.end <= now) p.status = rand() < 0.08 ? "no_show" : "completed";
    else if (p.start <= now) {
      p.status = exam && !inChair.has(p.providerId) ? "in_exam" : "arrived";
      if (exam) inChair.add(p.providerId);
    } else if (p.start.getTime() - now.getTime() <= 40 * MINUTE && localParts(p.start, tz).date === today)
      p.status = rand() < 0.8 ? "arrived" : "confirmed";
    else p.status = p.start.getTime() - now.getTime() < 3 * 864e5 || rand() < 0.35 ? "confirmed" : "booked";
    if (p.bookedAt > now) p.bookedAt = new Date(now.getTime() - 864e5);
  }
  if (!planned.length) return { appointments: 0 };

  const inserted: { id: string }[] = [];
  for (let i = 0; i < planned.length; i += 500) {
    const part = planned.slice(i, i + 500);
    inserted.push(
      ...(await tx
        .insert(schema.appointments)
        .values(
          part.map((p) => ({
            patientId: p.patientId,
            providerId: p.providerId,
            appointmentTypeId: p.typeId,
            siteId: p.siteId,
            roomId: p.roomId,
            startsAt: p.start,
            endsAt: p.end,
            status: p.status,
            notes: DIARY_NOTE,
            createdAt: p.bookedAt,
            updatedAt: p.bookedAt,
            statusChangedAt: changedAt(p, now),
          })),
        )
        .returning({ id: schema.appointments.id })),
    );
  }
  const ids = planned.map((_, i) => inserted[i]!.id);

  // The status trail: booked, then the move to the present state.
  const trail = planned.flatMap((p, i) => {
    const first = { appointmentId: ids[i]!, toStatus: "booked" as Status, changedAt: p.bookedAt };
    return p.status === "booked"
      ? [first]
      : [
          first,
          { appointmentId: ids[i]!, fromStatus: "booked" as Status, toStatus: p.status, changedAt: changedAt(p, now) },
        ];
  });
  for (let i = 0; i < trail.length; i += 1000)
    await tx.insert(schema.appointmentStatusChanges).values(trail.slice(i, i + 1000));

  // The message log: a confirmation when booked, a reminder the day before (sent once its time came).
  const messages = planned.flatMap((p, i) => {
    const out: (typeof schema.appointmentMessages.$inferInsert)[] = [];
    const base = { appointmentId: ids[i]!, sequence: 0, recipient: p.email };
    out.push(
      p.email
        ? {
            ...base,
            kind: "confirmation",
            status: "sent",
            dueAt: p.bookedAt,
            sentAt: p.bookedAt,
            attempts: 1,
            createdAt: p.bookedAt,
          }
        : {
            ...base,
            kind: "confirmation",
            status: "skipped",
            dueAt: p.bookedAt,
            skippedReason: "No e-mail address",
            createdAt: p.bookedAt,
          },
    );
    const due = new Date(p.start.getTime() - 864e5);
    if (due <= now && p.status !== "booked")
      out.push(
        p.email
          ? i % 41 === 7
            ? {
                ...base,
                kind: "reminder",
                status: "failed",
                dueAt: due,
                attempts: 3,
                lastError: "Mailbox unavailable (550)",
                createdAt: due,
              }
            : { ...base, kind: "reminder", status: "sent", dueAt: due, sentAt: due, attempts: 1, createdAt: due }
          : {
              ...base,
              kind: "reminder",
              status: "skipped",
              dueAt: due,
              skippedReason: "No e-mail address",
              createdAt: due,
            },
      );
    return out;
  });
  for (let i = 0; i < messages.length; i += 1000)
    await tx.insert(schema.appointmentMessages).values(messages.slice(i, i + 1000));

  // 3. Exams: signed for the kept visits, open for the one in the chair, carried forward from the patient's last exam.
  const examPlans = planned
    .map((p, i) => ({ p, appointmentId: ids[i]! }))
    .filter(
      ({ p }) => p.sourceExamId && p.typeName !== "Spectacle collection" && ["completed", "in_exam"].includes(p.status),
    );
  if (examPlans.length) {
    const made = await tx
      .insert(schema.exams)
      .values(
        examPlans.map(({ p, appointmentId }) => {
          const signed = p.status === "completed";
          const examinedAt = new Date(p.start.getTime() + 2 * MINUTE);
          return {
            patientId: p.patientId,
            optometristId: p.providerId,
            appointmentId,
            examinedAt,
            status: signed ? ("signed" as const) : ("in_progress" as const),
            signedAt: signed ? new Date(p.end.getTime() - 2 * MINUTE) : null,
            signedById: signed ? p.providerId : null,
            createdAt: examinedAt,
            updatedAt: signed ? new Date(p.end.getTime() - 2 * MINUTE) : examinedAt,
          };
        }),
      )
      .returning({ id: schema.exams.id });
    const map = examPlans.map(({ p }, i) => ({
      new_id: made[i]!.id,
      src_id: p.sourceExamId!,
      iop_time: `${String(Math.floor(p.iopMinute / 60)).padStart(2, "0")}:${String(p.iopMinute % 60).padStart(2, "0")}`,
      reason: p.typeName === "Contact lens check" ? "Contact-lens aftercare" : "Routine exam",
    }));
    const mapping = sql`jsonb_to_recordset(${JSON.stringify(map)}::jsonb) as m(new_id uuid, src_id uuid, iop_time time, reason text)`;
    for (const table of COPIED) {
      const cols = rows<{ c: string }>(
        await tx.execute(sql`select column_name as c from information_schema.columns
          where table_name = ${table} and table_schema = current_schema()
            and column_name not in ('id', 'exam_id', 'addendum_id') and is_generated = 'NEVER'
            and is_identity = 'NO' order by ordinal_position`),
      ).map((r) => r.c);
      const select = cols.map((c) =>
        table === "exam_iop" && c === "measured_time"
          ? "(m.iop_time + (t.reading - 1) * interval '2 minutes')::time"
          : `t.${c}`,
      );
      await tx.execute(sql`
        insert into ${sql.raw(table)} (exam_id, ${sql.raw(cols.join(", "))})
        select m.new_id, ${sql.raw(select.join(", "))} from ${sql.raw(table)} t join ${mapping} on t.exam_id = m.src_id
        ${table === "exam_refractions" ? sql`where t.addendum_id is null` : sql``}`);
    }
    await tx.execute(sql`
      insert into exam_history (exam_id, reason, symptoms, ocular_history, general_history, medications, family_history)
      select m.new_id, m.reason, '', '', '', '', '' from ${mapping}`);
    await tx.execute(sql`
      insert into exam_assessment (exam_id, assessment, plan, recall_months)
      select m.new_id, coalesce(a.assessment, 'Stable; spectacles as prescribed.'), coalesce(a.plan, 'Routine recall.'),
        coalesce(a.recall_months, 24)
      from ${mapping} left join exam_assessment a on a.exam_id = m.src_id`);
    await tx.execute(sql`
      update patients p set last_exam_at = e.examined_at
      from exams e join ${mapping} on e.id = m.new_id
      where p.id = e.patient_id and e.status = 'signed' and (p.last_exam_at is null or p.last_exam_at < e.examined_at)`);
  }
  return { appointments: planned.length, exams: examPlans.length };
}

function changedAt(p: Planned, now: Date) {
  const at =
    p.status === "completed"
      ? p.end
      : p.status === "no_show"
        ? new Date(p.start.getTime() + 15 * MINUTE)
        : p.status === "in_exam"
          ? p.start
          : p.status === "arrived"
            ? new Date(Math.min(now.getTime(), p.start.getTime() - 5 * MINUTE))
            : p.status === "confirmed"
              ? new Date(Math.min(now.getTime(), p.start.getTime() - 2 * 864e5))
              : p.bookedAt;
  return at < p.bookedAt ? p.bookedAt : at;
}
