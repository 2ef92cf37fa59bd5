/**
 * The demo practice's paperwork, so every list has something in each state: invoices (draft,
 * issued, part-paid, paid at the desk, paid online, refunded, overdue), referral letters from the
 * triage cases (draft, sent, acknowledged, replied, overdue, withdrawn) and a recall round already
 * sent. Fictional throughout; amounts follow the demo fee schedule. Idempotent: added once, when
 * the practice has no invoices and no referrals yet.
 */
import { eq, sql } from "drizzle-orm";
import type { NodePgDatabase } from "drizzle-orm/node-postgres";
import * as schema from "../app/db/schema";
import { snapshotOf } from "../app/models/referrals/snapshot.server";
import type { Tx as AppTx } from "../app/utils/db.server";
import { CASELOAD_DOMAIN } from "./caseload";
import { TRIAGE_CASES } from "./triage-cases";

type Tx = Parameters<Parameters<NodePgDatabase<typeof schema>["transaction"]>[0]>[0];
const DAY = 864e5;
const rows = <T>(r: { rows: unknown[] }) => r.rows as T[];

/** Invoice states of the demo: what each one shows, and how it got there. */
const INVOICE_PLAN = [
  { state: "draft", daysAgo: 0 },
  { state: "issued", daysAgo: 1 },
  { state: "issued", daysAgo: 3 },
  { state: "part-paid", daysAgo: 6 },
  { state: "paid at the desk", daysAgo: 0 },
  { state: "paid at the desk", daysAgo: 2 },
  { state: "paid online", daysAgo: 1 },
  { state: "paid online", daysAgo: 9 },
  { state: "refunded", daysAgo: 12 },
  // Issued well over a month ago and still unpaid.
  { state: "overdue", daysAgo: 48 },
  { state: "overdue", daysAgo: 75 },
  { state: "paid at the desk", daysAgo: 20 },
] as const;

export async function seedCasework(tx: Tx, now = new Date()) {
  const [{ n: invoiceCount } = { n: 0 }] = rows<{ n: number }>(
    await tx.execute(sql`select count(*)::int as n from invoices`),
  );
  if (invoiceCount === 0) await seedInvoices(tx, now);
  const [{ n: referralCount } = { n: 0 }] = rows<{ n: number }>(
    await tx.execute(sql`select count(*)::int as n from referrals`),
  );
  if (referralCount === 0) await seedReferralLetters(tx, now);
  await seedRecallRound(tx, now);
}

async function seedInvoices(tx: Tx, now: Date) {
  const [receptionist] = rows<{ id: string }>(
    await tx.execute(sql`select id from users where role = 'receptionist' order by email limit 1`),
  );
  const [settings] = rows<{ rate: number; currency: string }>(
    await tx.execute(sql`select tax_rate_bp as rate, currency from practice_settings where id = 1`),
  );
  const fees = rows<{
    id: string;
    code: string;
    description: string;
    price: number;
    kind: "service" | "item";
    tax: "standard" | "exempt";
  }>(
    await tx.execute(sql`select id, code, description, price_minor as price, kind, tax_category as tax from fee_items`),
  );
  const fee = (code: string) => fees.find((f) => f.code === code);
  // Patients with a recent signed exam, each billed for it (and for glasses on some).
  const seen = rows<{ patientId: string; examId: string }>(
    await tx.execute(sql`
      select distinct on (e.patient_id) e.patient_id as "patientId", e.id as "examId"
      from exams e join patients p on p.id = e.patient_id
      where e.status = 'signed' and p.email like ${"%@" + CASELOAD_DOMAIN}
        and age(e.examined_at, p.date_of_birth::timestamptz) >= interval '18 years'
      order by e.patient_id, e.examined_at desc limit ${INVOICE_PLAN.length}`),
  );
  if (!settings || !fee("EXAM-A") || seen.length < INVOICE_PLAN.length) return;
  const rate = settings.rate;
  let number = 0;
  for (const [i, plan] of INVOICE_PLAN.entries()) {
    const lines = [fee("EXAM-A")!, ...(i % 3 === 1 ? [fee("FR-STD"), fee("LN-SV")].filter((f) => !!f) : [])];
    const priced = lines.map((f, k) => {
      const tax = f.tax === "standard" ? Math.round((f.price * rate) / 10000) : 0;
      return { f, k, tax };
    });
    const subtotal = priced.reduce((s, l) => s + l.f.price, 0);
    const taxTotal = priced.reduce((s, l) => s + l.tax, 0);
    const total = subtotal + taxTotal;
    const createdAt = new Date(now.getTime() - plan.daysAgo * DAY - 3 * 3600e3);
    const issued = plan.state !== "draft";
    if (issued) number++;
    const paid =
      plan.state === "part-paid"
        ? Math.round(total / 2)
        : plan.state.startsWith("paid")
          ? total
          : plan.state === "refunded"
            ? 0
            : 0;
    // A refunded sale is voided once the money has gone back, keeping its number.
    const status = !issued
      ? "draft"
      : plan.state === "refunded"
        ? "void"
        : plan.state === "part-paid"
          ? "partially_paid"
          : paid === total
            ? "paid"
            : "open";
    const [invoice] = rows<{ id: string }>(
      await tx.execute(sql`
        insert into invoices (number, patient_id, exam_id, status, currency, tax_rate_bp, subtotal_minor, tax_minor,
          total_minor, paid_minor, issued_at, created_by_id, created_at, updated_at, notes, voided_at, void_reason)
        values (${issued ? number : null}, ${seen[i]!.patientId}, ${seen[i]!.examId}, ${status}, ${settings.currency},
          ${rate}, ${subtotal}, ${taxTotal}, ${total}, ${paid}, ${issued ? createdAt : null}, ${receptionist?.id ?? null},
          ${createdAt}, ${createdAt}, ${plan.state === "refunded" ? "Glasses returned within the trial period; refunded in full." : ""},
          ${plan.state === "refunded" ? new Date(createdAt.getTime() + 6 * DAY) : null},
          ${plan.state === "refunded" ? "Glasses returned; payment refunded in full" : null})
        returning id`),
    );
    for (const l of priced)
      await tx.execute(sql`
        insert into invoice_lines (invoice_id, fee_item_id, position, code, description, kind, tax_category, quantity,
          unit_price_minor, gross_minor, discount_minor, net_minor, tax_minor, created_at)
        values (${invoice!.id}, ${l.f.id}, ${l.k}, ${l.f.code}, ${l.f.description}, ${l.f.kind}, ${l.f.tax}, 1,
          ${l.f.price}, ${l.f.price}, 0, ${l.f.price}, ${l.tax}, ${createdAt})`);
    const paidAt = new Date(createdAt.getTime() + 20 * 60e3);
    if (plan.state === "part-paid" || plan.state === "paid at the desk" || plan.state === "refunded") {
      const amount = plan.state === "part-paid" ? paid : total;
      const [payment] = rows<{ id: string }>(
        await tx.execute(sql`
          insert into payments (invoice_id, method, status, amount_minor, currency, refunded_minor, reference,
            received_at, recorded_by_id, created_at, updated_at)
          values (${invoice!.id}, ${i % 2 ? "card_desk" : "cash"}, 'succeeded', ${amount}, ${settings.currency},
            ${plan.state === "refunded" ? amount : 0}, '', ${paidAt}, ${receptionist?.id ?? null}, ${paidAt}, ${paidAt})
          returning id`),
      );
      if (plan.state === "refunded")
        await tx.execute(sql`
          insert into refunds (payment_id, amount_minor, reason, created_by_id, created_at)
          values (${payment!.id}, ${amount}, 'Glasses returned within the trial period',
            ${receptionist?.id ?? null}, ${new Date(paidAt.getTime() + 6 * DAY)})`);
    }
    if (plan.state === "paid online") {
      const ref = `demo_${String(i).padStart(2, "0")}_${createdAt.getTime().toString(36)}`;
      await tx.execute(sql`
        insert into payments (invoice_id, method, status, amount_minor, currency, reference, stripe_checkout_session_id,
          stripe_payment_intent_id, received_at, created_at, updated_at)
        values (${invoice!.id}, 'card_online', 'succeeded', ${total}, ${settings.currency}, '', ${"cs_" + ref},
          ${"pi_" + ref}, ${paidAt}, ${paidAt}, ${paidAt})`);
      await tx.execute(sql`update invoices set pay_link_sent_at = ${createdAt} where id = ${invoice!.id}`);
    }
  }
  if (number)
    await tx.execute(sql`
      insert into invoice_counters (series, last_number) values ('invoice', ${number})
      on conflict (series) do update set last_number = greatest(invoice_counters.last_number, excluded.last_number)`);
}

type LetterExam = {
  examId: string;
  patientId: string;
  examinedAt: string;
  signedAt: string;
  examiner: string;
  examinerId: string;
  reason: string;
  symptoms: string;
  assessment: string;
  plan: string;
  lastName: string;
  medications: string;
};

const letterExams = (where: ReturnType<typeof sql>) => sql`
  select distinct on (p.id) e.id as "examId", p.id as "patientId", e.examined_at as "examinedAt",
    e.signed_at as "signedAt", u.name as examiner, u.id as "examinerId", coalesce(h.reason, '') as reason,
    coalesce(h.symptoms, '') as symptoms, coalesce(a.assessment, '') as assessment, coalesce(a.plan, '') as plan,
    p.last_name as "lastName", p.medications
  from exams e join patients p on p.id = e.patient_id join users u on u.id = e.optometrist_id
  left join exam_history h on h.exam_id = e.id left join exam_assessment a on a.exam_id = e.id
  where e.status = 'signed' and p.email like ${"%@" + CASELOAD_DOMAIN} and ${where}
  order by p.id, e.examined_at desc`;

/** Days allowed for each urgency (the demo's own choice, as a practice would set them). */
const FRAMES: Record<string, number> = { same_day: 1, urgent: 7, soon: 28, routine: 126 };

/**
 * Letters in each state. The triage cases' urgent letters were replied to, one is overdue, one
 * still a draft and one withdrawn; routine letters for cataract and glaucoma suspects are the
 * ones sent and acknowledged and still inside their time frame.
 */
async function seedReferralLetters(tx: Tx, now: Date) {
  const lastNames = TRIAGE_CASES.map((t) => t.last);
  const urgentExams = rows<LetterExam>(
    await tx.execute(
      letterExams(
        sql`p.last_name = any(${sql.raw(`array[${lastNames.map((n) => `'${n.replace(/'/g, "''")}'`).join(",")}]`)})`,
      ),
    ),
  );
  const routineExams = rows<LetterExam>(
    await tx.execute(
      letterExams(sql`exists (select 1 from exam_diagnoses d where d.exam_id = e.id and d.code in ('H25.9', 'H40.0'))
        and e.examined_at > ${new Date(now.getTime() - 100 * DAY)}
        -- The teaching case of raised IOP with an enlarged blind spot stays unreferred, for a referral to be written from it.
        and not exists (select 1 from exam_visual_fields f where f.exam_id = e.id and f.blind_spot_width_deg > 7.5)`),
    ),
  ).sort((x, y) => Date.parse(y.examinedAt) - Date.parse(x.examinedAt));
  const recipients = rows<{ id: string; specialty: string }>(
    await tx.execute(sql`select id, specialty from referral_recipients order by name`),
  );
  if (!recipients.length) return;
  const recipient = (pattern: RegExp) => recipients.find((r) => pattern.test(r.specialty)) ?? recipients[0]!;
  const recipientFor = (rule: string) =>
    /IOP|cup|disc margin|glaucoma/i.test(rule)
      ? recipient(/glaucoma/i)
      : /macular|distortion/i.test(rule)
        ? recipient(/retina/i)
        : /pupil|blind spot|papill|double/i.test(rule)
          ? recipient(/neuro/i)
          : recipient(/urgent/i);
  const urgencyFor = (rule: string) =>
    /detachment|curtain|sudden|arteritis|cells|hyphaema|hypopyon|angle closure|40 mmHg|break with|papilloedema|pupillary/i.test(
      rule,
    )
      ? "same_day"
      : /35 mmHg|break without|flashes|wet|distortion|double|haemorrhage/i.test(rule)
        ? "urgent"
        : "routine";

  type Letter = {
    e: LetterExam;
    state: "draft" | "sent" | "acknowledged" | "replied" | "overdue" | "withdrawn";
    urgency: string;
    reason: string;
    recipientId: string;
    history: string;
  };
  const letters: Letter[] = [];
  let overdue = false;
  for (const [i, t] of TRIAGE_CASES.entries()) {
    const e = urgentExams.find((x) => x.lastName === t.last);
    if (!e) continue;
    const urgency = urgencyFor(t.rule);
    const age = (now.getTime() - Date.parse(e.examinedAt)) / DAY;
    const state: Letter["state"] =
      !overdue && age > FRAMES[urgency]! + 2 ? "overdue" : i === 3 ? "draft" : i === 7 ? "withdrawn" : "replied";
    if (state === "overdue") overdue = true;
    letters.push({
      e,
      state,
      urgency,
      reason: t.rule,
      recipientId: recipientFor(t.rule).id,
      history: t.symptoms,
    });
  }
  for (const [i, e] of routineExams.slice(0, 4).entries())
    letters.push({
      e,
      state: i % 2 === 0 ? "sent" : "acknowledged",
      urgency: "routine",
      reason: /H40|pressure/i.test(e.assessment)
        ? "Borderline pressures: assessment for ocular hypertension"
        : "Cataract affecting daily life: assessment for surgery",
      recipientId: /pressure/i.test(e.assessment) ? recipient(/glaucoma/i).id : recipient(/general/i).id,
      history: e.symptoms,
    });

  for (const l of letters) {
    const examinedAt = new Date(l.e.examinedAt);
    const sentAt = l.state === "draft" || l.state === "withdrawn" ? null : new Date(examinedAt.getTime() + 3600e3);
    const acknowledgedAt =
      l.state === "acknowledged" || l.state === "replied" ? new Date(sentAt!.getTime() + DAY / 2) : null;
    // An acknowledged routine letter has its clinic date ahead; a replied one was seen.
    const appointmentOn =
      l.state === "acknowledged"
        ? new Date(now.getTime() + 30 * DAY).toISOString().slice(0, 10)
        : l.state === "replied"
          ? new Date(Math.min(sentAt!.getTime() + Math.max(1, FRAMES[l.urgency]! - 1) * DAY, now.getTime() - 2 * DAY))
              .toISOString()
              .slice(0, 10)
          : null;
    const repliedAt =
      l.state === "replied"
        ? new Date(Math.min(sentAt!.getTime() + Math.max(1, FRAMES[l.urgency]!) * DAY, now.getTime() - DAY))
        : null;
    const withdrawnAt = l.state === "withdrawn" ? new Date(examinedAt.getTime() + 2 * 3600e3) : null;
    // The letter carries the exam as the app's own builder snapshots it: acuity, refraction,
    // pressures, findings and the prompts that raised the referral.
    const [exam] = await tx.select().from(schema.exams).where(eq(schema.exams.id, l.e.examId));
    const snapshot = await snapshotOf(exam!, tx as unknown as AppTx);
    const status = l.state === "overdue" ? "sent" : l.state;
    const [row] = rows<{ id: string }>(
      await tx.execute(sql`
        insert into referrals (patient_id, exam_id, recipient_id, created_by_id, status, urgency, proposed_urgency, reason,
          body, relevant_history, snapshot, time_frame_days, queued_at, sent_at, acknowledged_at, acknowledged_by,
          appointment_on, replied_at, withdrawn_at, created_at, updated_at)
        values (${l.e.patientId}, ${l.e.examId}, ${l.recipientId}, ${l.e.examinerId}, ${status}, ${l.urgency},
          ${l.urgency}, ${l.reason}, ${`${l.e.assessment} ${l.e.plan}`.trim()}, ${l.history},
          ${JSON.stringify(snapshot)}::jsonb, ${sentAt ? FRAMES[l.urgency]! : null}, ${sentAt}, ${sentAt},
          ${acknowledgedAt}, ${acknowledgedAt ? "Clinic secretary" : null}, ${appointmentOn}, ${repliedAt},
          ${withdrawnAt}, ${examinedAt}, ${repliedAt ?? acknowledgedAt ?? sentAt ?? withdrawnAt ?? examinedAt})
        returning id`),
    );
    const events: [string, Date, string | null][] = [["drafted", examinedAt, l.e.examinerId]];
    if (sentAt) events.push(["sent", sentAt, l.e.examinerId]);
    if (acknowledgedAt) events.push(["acknowledged", acknowledgedAt, null]);
    if (repliedAt) events.push(["replied", repliedAt, null]);
    if (withdrawnAt) events.push(["withdrawn", withdrawnAt, l.e.examinerId]);
    for (const [kind, at, actor] of events)
      await tx.execute(sql`
        insert into referral_events (referral_id, kind, actor_user_id, actor_name, at)
        values (${row!.id}, ${kind}, ${actor}, ${actor ? null : "Clinic secretary"}, ${at})`);
  }
}

/** A recall round sent three weeks ago to a handful of patients who were due. */
async function seedRecallRound(tx: Tx, now: Date) {
  const [{ n } = { n: 0 }] = rows<{ n: number }>(await tx.execute(sql`select count(*)::int as n from recall_messages`));
  if (n > 0) return;
  const due = rows<{ id: string; email: string; lastExam: string }>(
    await tx.execute(sql`
      select p.id, p.email, p.last_exam_at as "lastExam" from patients p
      where p.email like ${"%@" + CASELOAD_DOMAIN} and p.recalls_by_email
        and p.last_exam_at < now() - interval '25 months'
      order by p.last_name, p.first_name limit 12`),
  );
  if (!due.length) return;
  const sentAt = new Date(now.getTime() - 21 * DAY);
  const [batch] = rows<{ id: string }>(
    await tx.execute(
      sql`insert into recall_batches (created_at, total) values (${sentAt}, ${due.length}) returning id`,
    ),
  );
  for (const [i, p] of due.entries()) {
    const dueDate = new Date(new Date(p.lastExam).getTime() + 730 * DAY).toISOString().slice(0, 10);
    await tx.execute(sql`
      insert into recall_messages (batch_id, patient_id, due_date, status, recipient, attempts, sent_at, created_at, last_error)
      values (${batch!.id}, ${p.id}, ${dueDate}, ${i === 5 ? "failed" : "sent"}, ${p.email}, ${i === 5 ? 3 : 1},
        ${i === 5 ? null : new Date(sentAt.getTime() + i * 60e3)}, ${sentAt}, ${i === 5 ? "Mailbox full (552)" : null})`);
  }
}
