/**
 * The lists and pickers at 100,000 patients: every list pages in the database, and the patient
 * search (the one behind every picker) finds a patient wherever they sort. Asserts results, not
 * timings (speed is measured by the benchmarks).
 */
import { randomBytes } from "node:crypto";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { loader as patientsApi } from "~/routes/api/patients";
import { loader as ordersLoader } from "~/routes/orders/index";
import { loader as referralsLoader } from "~/routes/referrals/index";
import { pool } from "~/utils/db.server";
import { cookieFor, makeRequest, run, statusOf } from "#tests/support/helpers";
import { EMPTY_REFERRAL_SNAPSHOT } from "#tests/support/snapshots";

const tag = randomBytes(3).toString("hex");
const SURNAME = `Zzyzx${tag}`;
const BULK = 100_000;
const q = async <T = Record<string, unknown>>(text: string, values: unknown[] = []) =>
  (await pool.query(text, values)).rows as T[];

let cookie = "";
let late: { id: string };

beforeAll(async () => {
  cookie = await cookieFor("receptionist");
  // 100,000 fictional patients in one statement; one of them ("Zzyzx…") sorts after all the others.
  await q(
    `insert into patients (first_name, last_name, date_of_birth, email)
     select 'Bulk' || g, 'Scale' || lpad(g::text, 6, '0') || $1, date '1950-01-01' + (g % 20000), 'scale' || g || '-' || $1 || '@dioptra-demo.test'
     from generate_series(1, ${BULK}) g`,
    [tag],
  );
  late = (
    await q<{ id: string }>(
      `insert into patients (first_name, last_name, date_of_birth) values ('Yolanda', $1, '1966-06-16') returning id`,
      [SURNAME],
    )
  )[0]!;
  // 60 of them have a signed exam, a sent referral and a contact-lens order: more than two pages of each list.
  const optom = (await q<{ id: string }>(`select id from users where email = 'optometrist@dioptra-demo.test'`))[0]!;
  await q(
    `insert into exams (patient_id, optometrist_id, status, signed_at, signed_by_id)
     select p.id, $2::uuid, 'signed'::exam_status, now(), $2::uuid from patients p
     where p.last_name like 'Scale%' || $1 and p.first_name in (select 'Bulk' || g from generate_series(1, 59) g)
     union all select $3::uuid, $2::uuid, 'signed'::exam_status, now(), $2::uuid`,
    [tag, optom.id, late.id],
  );
  const [recipient] = await q<{ id: string }>(
    `insert into referral_recipients (name, email) values ('Dr Scale Surgeon', $1) returning id`,
    [`scale-surgeon-${tag}@dioptra-demo.test`],
  );
  await q(
    `insert into referrals (patient_id, exam_id, recipient_id, created_by_id, status, snapshot, sent_at, time_frame_days)
     select e.patient_id, e.id, $3, $2, 'sent', $4::jsonb, now(), 90 from exams e join patients p on p.id = e.patient_id
     where p.last_name like '%' || $1`,
    [tag, optom.id, recipient!.id, EMPTY_REFERRAL_SNAPSHOT],
  );
  await q(
    `insert into prescriptions (patient_id, exam_id, kind, issued_by_id, expires_on, prescriber_name, prescriber_licence)
     select e.patient_id, e.id, 'contact_lens', $2, '2099-01-01', 'Dr Scale', '01-00000' from exams e join patients p on p.id = e.patient_id
     where p.last_name like '%' || $1`,
    [tag, optom.id],
  );
  const [lab] = await q<{ id: string }>(`insert into labs (name, email) values ($1, $2) returning id`, [
    `Scale lab ${tag}`,
    `scale-lab-${tag}@dioptra-demo.test`,
  ]);
  await q(
    `insert into optical_orders (kind, patient_id, prescription_id, lab_id, boxes_right, boxes_left)
     select 'contact_lenses', rx.patient_id, rx.id, $2, 1, 1 from prescriptions rx join patients p on p.id = rx.patient_id
     where p.last_name like '%' || $1`,
    [tag, lab!.id],
  );
}, 180_000);

afterAll(async () => {
  // Later files on this worker share the database: take the 100,000 back out.
  const mine = `(select id from patients where last_name like '%' || $1)`;
  await q(`delete from optical_orders where patient_id in ${mine}`, [tag]);
  await q(`delete from prescriptions where patient_id in ${mine}`, [tag]);
  await q(`delete from referrals where patient_id in ${mine}`, [tag]);
  await q(`delete from exams where patient_id in ${mine}`, [tag]);
  await q(`delete from audit_log where patient_id in ${mine}`, [tag]);
  await q(`delete from patients where last_name like '%' || $1`, [tag]);
}, 180_000);

describe(`lists at ${BULK.toLocaleString("en-GB")} patients`, () => {
  it("the patient search behind every picker finds the one patient who sorts after all the others", async () => {
    const [{ n }] = (await q<{ n: string }>(`select count(*) as n from patients where last_name like '%' || $1`, [
      tag,
    ])) as [{ n: string }];
    expect(Number(n)).toBe(BULK + 1);
    // This one sorts after the whole bulk of the register (other files' patients with letters
    // beyond "z", such as "Š", may sort later still): far past any first page of 500.
    const [{ before }] = (await q<{ before: string }>(
      `select count(*) as before from patients where lower(last_name) < lower($1)`,
      [SURNAME],
    )) as [{ before: string }];
    expect(Number(before)).toBeGreaterThanOrEqual(BULK);

    const res = (await run(
      patientsApi,
      makeRequest(`/api/patients?q=${SURNAME.toLowerCase()}`, { cookie }),
    )) as Response;
    expect(res.status).toBe(200);
    const body = (await res.json()) as { total: number; results: { id: string; lastName: string }[] };
    expect(body.total).toBe(1);
    expect(body.results).toEqual([expect.objectContaining({ id: late.id, lastName: SURNAME })]);

    // By date of birth too, among the 5 bulk patients born the same day and the one searched for.
    const byDob = (await run(patientsApi, makeRequest(`/api/patients?q=16/06/1966`, { cookie }))) as Response;
    const dob = (await byDob.json()) as { results: { id: string }[] };
    expect(dob.results.map((r) => r.id)).toContain(late.id);

    // A broad search counts up to its cap and pages on: the next page starts where the first ended.
    const broad = async (offset: number) =>
      (await (
        (await run(patientsApi, makeRequest(`/api/patients?q=scale&offset=${offset}`, { cookie }))) as Response
      ).json()) as { total: number; totalIsExact: boolean; results: { id: string }[] };
    const [first, second] = [await broad(0), await broad(20)];
    expect(first.totalIsExact).toBe(false);
    expect(first.results).toHaveLength(20);
    expect(second.results).toHaveLength(20);
    expect(second.results.some((r) => first.results.some((f) => f.id === r.id))).toBe(false);
  });

  it("the referrals list pages and filters by patient in the database", async () => {
    const page = async (search: string) => {
      const result = await run(referralsLoader, makeRequest(`/referrals?${search}`, { cookie }));
      expect(statusOf(result)).toBe(200);
      return result as Awaited<ReturnType<typeof referralsLoader>>;
    };
    const found = await page(`q=${SURNAME}`);
    expect(found.total).toBe(1);
    expect(found.rows.map((r) => r.patientId)).toEqual([late.id]);

    // All 60 of this file's referrals, 25 a page, sorted by patient: page 3 holds the last 10 and ends with the late patient.
    const third = await page(`q=${tag}&sort=patient&dir=asc&page=3`);
    expect(third.total).toBe(60);
    expect(third.rows).toHaveLength(10);
    expect(third.rows.at(-1)?.patientId).toBe(late.id);
    const [p1, p2] = [await page(`q=${tag}&sort=patient&page=1`), await page(`q=${tag}&sort=patient&page=2`)];
    const ids = new Set([...p1.rows, ...p2.rows, ...third.rows].map((r) => r.id));
    expect(ids.size).toBe(60);
    expect(third.counts.sent).toBe(60);
  });

  it("the orders list pages and filters by patient in the database", async () => {
    const page = async (search: string) => {
      const result = await run(ordersLoader, makeRequest(`/orders?${search}`, { cookie }));
      expect(statusOf(result)).toBe(200);
      return result as Awaited<ReturnType<typeof ordersLoader>>;
    };
    const found = await page(`state=all&q=${SURNAME}`);
    expect(found.total).toBe(1);
    expect(found.orders.map((o) => o.patientId)).toEqual([late.id]);
    const third = await page(`state=draft&q=${tag}&sort=label&dir=asc&page=3`);
    expect(third.total).toBe(60);
    expect(third.orders).toHaveLength(10);
    const numbers = third.orders.map((o) => o.number);
    expect(numbers).toEqual([...numbers].sort((a, b) => a - b));
  });
});
