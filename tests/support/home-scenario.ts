/**
 * One working day's worth of rows for the home pages, written with plain SQL so both the
 * integration tests (the app's pool) and the browser tests (the stack's database) can build it:
 * an optometrist of its own (so their day is exactly these rows), patients waiting and still to
 * come, an unsigned exam, an unread referral reply, a result added by a colleague, an unpaid
 * invoice of a patient visiting today, a move request, an order ready to collect and a failed e-mail.
 * Fictional people, `.test` addresses.
 */
import { randomBytes } from "node:crypto";
import { EMPTY_REFERRAL_SNAPSHOT } from "./snapshots";

export type Query = <T = Record<string, unknown>>(text: string, values?: unknown[]) => Promise<T[]>;

export async function homeScenario(q: Query) {
  const tag = randomBytes(3).toString("hex");
  const one = async <T = { id: string }>(text: string, values: unknown[] = []) => (await q<T>(text, values))[0]!;
  const { time_zone: timeZone } = await one<{ time_zone: string }>(`select time_zone from practice_settings limit 1`);
  const desk = await one<{ id: string }>(`select id from users where email = 'reception@dioptra-demo.test'`);
  const optom = await one(
    `insert into users (email, name, role, licence_number) values ($1, $2, 'optometrist', '01-99999') returning id`,
    [`home-optom-${tag}@dioptra-demo.test`, `Dr Home ${tag}`],
  );
  const type = await one(`select id from appointment_types order by name limit 1`);
  const patient = (first: string, last: string) =>
    one(
      `insert into patients (first_name, last_name, date_of_birth, email) values ($1, $2, '1970-05-06', $3) returning id`,
      [first, last, `home-${first.toLowerCase()}-${tag}@dioptra-demo.test`],
    );
  // Surnames that sort first, so the short home lists show these rows.
  const waiting = await patient("Wanda", `Aaahome${tag}`);
  const coming = await patient("Colin", `Aaahome${tag}`);
  const debtor = await patient("Della", `Aaahome${tag}`);
  const mover = await patient("Morag", `Aaahome${tag}`);
  const collector = await patient("Cora", `Aaahome${tag}`);

  // Today in the practice's zone: one patient arrived for an early slot, one booked for the last slot.
  const today = (hour: number) =>
    `(date_trunc('day', now() at time zone $1) + interval '${hour} hours') at time zone $1`;
  const appt = (patientId: string, hour: number, status: string, at = today(hour)) =>
    one(
      `insert into appointments (patient_id, provider_id, appointment_type_id, starts_at, ends_at, status)
       values ($2, $3, $4, ${at}, ${at} + interval '20 minutes', $5) returning id`,
      [timeZone, patientId, optom.id, type.id, status],
    );
  const arrived = await appt(waiting.id, 0, "arrived");
  // The next one to come: a couple of minutes from now (but still today), so it heads the short
  // list of who is to come at any hour, ahead of the demo diary's day.
  const booked = await appt(
    coming.id,
    23,
    "booked",
    `least(date_trunc('minute', now()) + interval '2 minutes', ${today(23)} + interval '39 minutes')`,
  );
  const debtorVisit = await appt(debtor.id, 1, "booked");
  const laterVisit = await one(
    `insert into appointments (patient_id, provider_id, appointment_type_id, starts_at, ends_at)
     values ($1, $2, $3, now() + interval '10 days', now() + interval '10 days 20 minutes') returning id`,
    [mover.id, optom.id, type.id],
  );

  const exam = await one(`insert into exams (patient_id, optometrist_id) values ($1, $2) returning id`, [
    waiting.id,
    optom.id,
  ]);
  const signed = await one(
    `insert into exams (patient_id, optometrist_id, status, signed_at, signed_by_id, examined_at)
     values ($1, $2, 'signed', now() - interval '20 days', $2, now() - interval '20 days') returning id`,
    [collector.id, optom.id],
  );
  const recipient = await one(
    `insert into referral_recipients (name, email) values ('Dr Fictional Surgeon', $1) returning id`,
    [`surgeon-${tag}@dioptra-demo.test`],
  );
  const referral = await one(
    `insert into referrals (patient_id, exam_id, recipient_id, created_by_id, status, snapshot, sent_at, replied_at, time_frame_days)
     values ($1, $2, $3, $4, 'replied', $5::jsonb, now() - interval '15 days', now() - interval '1 day', 90) returning id`,
    [collector.id, signed.id, recipient.id, optom.id, EMPTY_REFERRAL_SNAPSHOT],
  );
  await q(
    `insert into referral_replies (referral_id, patient_id, author_name, body) values ($1, $2, 'Dr Fictional Surgeon', 'Seen in clinic; thank you.')`,
    [referral.id, collector.id],
  );
  const document = await one(
    `insert into documents (patient_id, exam_id, kind, description, original_name, content_type, size_bytes, storage_key, uploaded_by_id)
     values ($1, $2, 'field_printout', $3, 'fields.pdf', 'application/pdf', 1000, $4, $5) returning id`,
    [waiting.id, exam.id, `Field printout ${tag}`, `home-test/${tag}.pdf`, desk.id],
  );

  const invoice = await one(
    `insert into invoices (patient_id, status, number, currency, subtotal_minor, total_minor, paid_minor, issued_at)
     values ($1, 'open', (select coalesce(max(number), 0) + 100000 from invoices), 'GBP', 4500, 4500, 1000, now() - interval '3 days')
     returning id, number`,
    [debtor.id],
  );
  const move = await one(
    `insert into appointment_change_requests (appointment_id, patient_id, message, created_at)
     values ($1, $2, 'Could we make it a Saturday?', now() - interval '3650 days') returning id`,
    [laterVisit.id, mover.id],
  );

  const rx = await one(
    `insert into prescriptions (patient_id, exam_id, kind, issued_by_id, expires_on, prescriber_name, prescriber_licence)
     values ($1, $2, 'contact_lens', $3, '2099-01-01', 'Dr Home', '01-99999') returning id`,
    [collector.id, signed.id, optom.id],
  );
  const lab = await one(`insert into labs (name, email) values ($1, $2) returning id`, [
    `Home lab ${tag}`,
    `lab-${tag}@dioptra-demo.test`,
  ]);
  const order = await one<{ id: string; number: number }>(
    `insert into optical_orders (kind, patient_id, prescription_id, lab_id, boxes_right, boxes_left)
     values ('contact_lenses', $1, $2, $3, 1, 1) returning id, number`,
    [collector.id, rx.id, lab.id],
  );
  for (const state of ["sent_to_lab", "received", "ready_to_collect"])
    await q(`update optical_orders set state = $2 where id = $1`, [order.id, state]);
  // Waiting longest, so it heads the list.
  await q(`update optical_orders set state_changed_at = now() - interval '3650 days' where id = $1`, [order.id]);

  const failed = await one(
    `insert into appointment_messages (appointment_id, kind, status, recipient, last_error, created_at)
     values ($1, 'reminder', 'failed', $2, 'Mailbox unavailable (test)', now() + interval '1 minute') returning id`,
    [booked.id, `home-colin-${tag}@dioptra-demo.test`],
  );

  return {
    tag,
    timeZone,
    optometrist: { id: optom.id, email: `home-optom-${tag}@dioptra-demo.test`, name: `Dr Home ${tag}` },
    patients: { waiting, coming, debtor, mover, collector },
    appointments: { arrived, booked, debtorVisit, laterVisit },
    exam,
    referral,
    document,
    invoice: invoice as unknown as { id: string; number: number },
    move,
    order,
    failed,
  };
}

export type HomeScenario = Awaited<ReturnType<typeof homeScenario>>;
