/** Order reports for the owner: by state and age, remakes with reasons, and exams that led to an order. */
import { sql } from "drizzle-orm";
import { db } from "~/utils/db.server";

export type ReportPeriod = { from: string; to: string };

/** Open orders by state, with how many have waited past the overdue limit at the lab. */
export async function ordersByState(overdueDays: number) {
  const res = await db.execute<{ state: string; n: number; oldest_days: number | null; overdue: number }>(sql`
    select state, count(*)::int as n,
           max(extract(day from now() - state_changed_at))::int as oldest_days,
           count(*) filter (where state = 'sent_to_lab' and state_changed_at < now() - make_interval(days => ${overdueDays}))::int as overdue
    from optical_orders group by state`);
  return res.rows;
}

export async function overdueAtLab(overdueDays: number) {
  const res = await db.execute<{ id: string; number: number; patient: string; lab: string; days: number }>(sql`
    select o.id, o.number, p.first_name || ' ' || p.last_name as patient, l.name as lab,
           extract(day from now() - o.state_changed_at)::int as days
    from optical_orders o join patients p on p.id = o.patient_id join labs l on l.id = o.lab_id
    where o.state = 'sent_to_lab' and o.state_changed_at < now() - make_interval(days => ${overdueDays})
    order by o.state_changed_at`);
  return res.rows;
}

/** Remakes in the period (the day range is inclusive, in UTC dates). */
export async function remakes(period: ReportPeriod) {
  const res = await db.execute<{
    id: string;
    number: number;
    at: string;
    reason: string;
    lab: string;
    actor: string | null;
  }>(sql`
    select o.id, o.number, e.at::text as at, e.reason, l.name as lab, u.name as actor
    from order_events e join optical_orders o on o.id = e.order_id join labs l on l.id = o.lab_id left join users u on u.id = e.actor_user_id
    where e.to_state = 'remake' and e.at >= ${period.from}::date and e.at < ${period.to}::date + 1
    order by e.at desc`);
  return res.rows;
}

/** Signed exams in the period, and how many of them have an order (not cancelled) made from one of their prescriptions. */
export async function examsToOrders(period: ReportPeriod) {
  const res = await db.execute<{ exams: number; with_order: number }>(sql`
    select count(*)::int as exams,
           count(*) filter (where exists (
             select 1 from prescriptions rx join optical_orders o on o.prescription_id = rx.id
             where rx.exam_id = x.id and o.state <> 'cancelled'))::int as with_order
    from exams x
    where x.status = 'signed' and x.examined_at >= ${period.from}::date and x.examined_at < ${period.to}::date + 1`);
  const row = res.rows[0] ?? { exams: 0, with_order: 0 };
  return { exams: row.exams, withOrder: row.with_order, share: row.exams ? row.with_order / row.exams : null };
}
