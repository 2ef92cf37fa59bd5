/**
 * Fills a separate database (default `dioptra_bench_chart`, never the demo database) with a large
 * fictional practice for the benchmark: 100,000 patients and 1,000,000 signed exams with final
 * refractions, 1,000,000 appointments, and invoices, referrals, documents and optical orders in
 * proportion, generated inside PostgreSQL with INSERT … SELECT generate_series.
 *
 *   tsx seeds/generate-scale.ts                       # 100,000 patients, 10 exams each
 *   SCALE_PATIENTS=5000 tsx seeds/generate-scale.ts   # smaller
 *   SCALE_DB=other_name tsx seeds/generate-scale.ts
 *
 * The database is dropped and re-created, migrated and given the demo seed first, so it holds
 * the same users and settings as the demo.
 */
import pg from "pg";
import { runMigrations } from "../app/ops/migrate";
import { databaseUrl } from "../app/utils/db-url";
import { FIRST_NAMES } from "./names";
import { seed } from "./seed";

export type ScaleOptions = { db: string; patients: number; examsPerPatient: number; appointments: number };

/** The options from the environment: SCALE_DB, SCALE_PATIENTS, SCALE_EXAMS_PER_PATIENT, SCALE_APPOINTMENTS. */
export function scaleOptions(overrides: Partial<ScaleOptions> = {}): ScaleOptions {
  const patients = overrides.patients ?? Number(process.env.SCALE_PATIENTS ?? 100_000);
  const db = overrides.db ?? process.env.SCALE_DB ?? "dioptra_bench_chart";
  if (!/^[a-z_][a-z0-9_]*$/.test(db) || db === "dioptra") throw new Error(`Refusing to generate into database "${db}"`);
  return {
    db,
    patients,
    examsPerPatient: overrides.examsPerPatient ?? Number(process.env.SCALE_EXAMS_PER_PATIENT ?? 10),
    /** Appointments: ten per patient by default (1,000,000), over ten optometrists' half-hour slots. */
    appointments: overrides.appointments ?? Number(process.env.SCALE_APPOINTMENTS ?? patients * 10),
  };
}
const PROVIDERS = 10;

export function benchDatabaseUrl(db = scaleOptions().db) {
  const u = new URL(databaseUrl());
  u.pathname = `/${db}`;
  return u.toString();
}

export async function generateScale(options: ScaleOptions = scaleOptions()) {
  const { db: DB, patients: PATIENTS, examsPerPatient: EXAMS_PER_PATIENT, appointments: APPOINTMENTS } = options;
  const admin = new URL(databaseUrl());
  admin.pathname = "/postgres";
  const a = new pg.Client({ connectionString: admin.toString() });
  await a.connect();
  await a.query(`DROP DATABASE IF EXISTS "${DB}" WITH (FORCE)`);
  await a.query(`CREATE DATABASE "${DB}"`);
  await a.end();
  const url = benchDatabaseUrl(DB);
  await runMigrations(url);
  await seed(url);
  const c = new pg.Client({ connectionString: url });
  await c.connect();
  const step = async (label: string, sql: string, params: unknown[] = []) => {
    const t = Date.now();
    const r = await c.query(sql, params);
    console.log(`[scale] ${label}: ${r.rowCount ?? ""} rows in ${((Date.now() - t) / 1000).toFixed(1)} s`);
  };
  const firsts = FIRST_NAMES;
  const lastStems = [
    "Aber",
    "Black",
    "Carra",
    "Dun",
    "Ever",
    "Foth",
    "Green",
    "Harti",
    "Illing",
    "Jess",
    "Kil",
    "Low",
    "Merri",
    "Nettle",
    "Oaken",
    "Pendle",
    "Quarr",
    "Rush",
    "Salton",
    "Thistle",
    "Under",
    "Vex",
    "Wether",
    "Yarrow",
    "Ash",
    "Birch",
    "Cold",
    "Dew",
    "East",
    "Farr",
  ];
  const lastEnds = [
    "nethy",
    "thorn",
    "way",
    "more",
    "leigh",
    "gill",
    "halgh",
    "gan",
    "worth",
    "op",
    "bride",
    "ther",
    "weather",
    "fold",
    "shaw",
    "ford",
    "ington",
    "by",
    "stall",
    "wood",
  ];
  await c.query("SET synchronous_commit = off");
  await step(
    "patients",
    `insert into patients (first_name, last_name, date_of_birth, sex, email, phone, address_line1, city, postcode, last_exam_at, created_at)
     select ($1::text[])[1 + (g % array_length($1, 1))],
            ($2::text[])[1 + ((g / 7) % array_length($2, 1))] || ($3::text[])[1 + ((g / 211) % array_length($3, 1))] || case when g % 3 = 0 then '-' || ($2::text[])[1 + ((g / 13) % array_length($2, 1))] || 'er' else '' end,
            date '1935-01-01' + ((g::bigint * 7919) % 31000)::int,
            (array['female','male','other','unknown']::sex[])[1 + (g % 4)],
            'p' || g || '@scale.dioptra-demo.test',
            '07700 ' || lpad(((g::bigint * 104729) % 1000000)::text, 6, '0'),
            (g % 200 + 1) || ' Scale Street', 'Brackenford', 'BF' || (g % 9 + 1) || ' ' || (g % 8 + 1) || 'QT',
            timestamptz '2026-11-20 10:00+00' - make_interval(days => (g % 300)),
            timestamptz '2020-01-01 00:00+00' + make_interval(mins => g)
     from generate_series(1, $4::int) g`,
    [firsts, lastStems, lastEnds, PATIENTS],
  );
  await step(
    "exams",
    `insert into exams (patient_id, optometrist_id, examined_at, status, signed_at, signed_by_id, created_at, updated_at)
     select p.id, u.id, t, 'signed', t + interval '40 minutes', u.id, t, t
     from (select id, last_exam_at from patients where email like '%@scale.dioptra-demo.test') p
     cross join generate_series(0, $1::int - 1) k
     cross join lateral (select p.last_exam_at - make_interval(days => 365 * k) as t) tt
     cross join (select id from users where role = 'optometrist' order by email limit 1) u`,
    [EXAMS_PER_PATIENT],
  );
  await step(
    "final refractions",
    `insert into exam_refractions (exam_id, kind, eye, raw_text, sphere, cylinder, axis, add_power, vertex_mm, va_notation, va_log_mar)
     select e.id, 'final', eye::eye, '', s, c, case when c = 0 then 180 else 1 + (abs(hashtext(e.id::text)) % 180) end, null, 12, '6/6', 0
     from exams e
     join patients p on p.id = e.patient_id and p.email like '%@scale.dioptra-demo.test'
     cross join (values ('right'), ('left')) v(eye)
     cross join lateral (select round(((abs(hashtext(p.id::text)) % 41) - 28) / 4.0, 2)::float8 as s,
                                -round((abs(hashtext(p.id::text || eye)) % 9) / 4.0, 2)::float8 as c) x`,
  );
  await step(
    "spectacle prescriptions",
    `with latest as (
       select distinct on (e.patient_id) e.id as exam_id, e.patient_id, e.examined_at
       from exams e join patients p on p.id = e.patient_id and p.email like '%@scale.dioptra-demo.test'
       order by e.patient_id, e.examined_at desc)
     insert into prescriptions (patient_id, exam_id, kind, issued_by_id, issued_at, expires_on, prescriber_name, prescriber_licence)
     select l.patient_id, l.exam_id, 'spectacle', u.id, l.examined_at + interval '50 minutes', (l.examined_at + interval '24 months')::date, u.name, coalesce(u.licence_number, '')
     from latest l cross join (select id, name, licence_number from users where role = 'optometrist' order by email limit 1) u`,
  );
  await step(
    "prescription eyes",
    `insert into prescription_eyes (prescription_id, eye, sphere, cylinder, axis, vertex_mm)
     select rx.id, r.eye, r.sphere, r.cylinder, r.axis, 12
     from prescriptions rx join exam_refractions r on r.exam_id = rx.exam_id and r.kind = 'final'
     join patients p on p.id = rx.patient_id and p.email like '%@scale.dioptra-demo.test'`,
  );
  await step(
    "optometrists for the appointments",
    `insert into users (email, name, role, password_hash)
     select 'scale-optom-' || g || '@scale.dioptra-demo.test', 'Scale Optometrist ' || g, 'optometrist', null
     from generate_series(1, $1::int) g`,
    [PROVIDERS],
  );
  // One appointment per optometrist per half hour, 09:00–17:00 every day from 2022-01-03 on, in
  // batches so no single statement holds a million rows of work.
  for (let from = 0; from < APPOINTMENTS; from += 250_000) {
    const to = Math.min(APPOINTMENTS, from + 250_000) - 1;
    await step(
      `appointments ${from + 1}–${to + 1}`,
      `with prov as (select array_agg(id order by email) ids from users where email like 'scale-optom-%'),
            pat as (select array_agg(id order by id) ids from patients where email like '%@scale.dioptra-demo.test'),
            typ as (select id from appointment_types order by name limit 1)
       insert into appointments (patient_id, provider_id, appointment_type_id, starts_at, ends_at, status)
       select pat.ids[1 + (g % array_length(pat.ids, 1))], prov.ids[1 + (g % $3::int)], typ.id, s.t, s.t + interval '30 minutes',
              (array['booked','confirmed','completed','completed','cancelled','no_show']::appointment_status[])[1 + (g % 6)]
         from generate_series($1::int, $2::int) g, prov, pat, typ,
              lateral (select (timestamp '2022-01-03 09:00' + ((g / $3::int) / 16) * interval '1 day'
                                + ((g / $3::int) % 16) * interval '30 minutes') at time zone 'Europe/London' as t) s`,
      [from, to, PROVIDERS],
    );
  }
  // Half the exams are billed: one issued invoice each, most of them paid.
  await step(
    "invoices",
    `insert into invoices (number, patient_id, exam_id, status, currency, subtotal_minor, total_minor, paid_minor, issued_at, created_at, updated_at)
     select 100000 + row_number() over (order by e.examined_at, e.id), e.patient_id, e.id,
            case when row_number() over (order by e.id) % 10 = 0 then 'open' else 'paid' end::invoice_status,
            'GBP', 4500, 4500, case when row_number() over (order by e.id) % 10 = 0 then 0 else 4500 end,
            e.examined_at + interval '1 hour', e.examined_at, e.examined_at
     from exams e join patients p on p.id = e.patient_id and p.email like '%@scale.dioptra-demo.test'
     where hashtext(e.id::text) % 2 = 0`,
  );
  // One exam in fifty led to a referral letter (most sent, some replied), with the recipient the demo keeps.
  await step(
    "referrals",
    `insert into referrals (patient_id, exam_id, recipient_id, created_by_id, status, urgency, reason, snapshot, sent_at, replied_at, time_frame_days, created_at, updated_at)
     select e.patient_id, e.id, r.id, e.optometrist_id,
            case when abs(hashtext(e.id::text)) % 4 = 0 then 'replied' else 'sent' end::referral_status, 'routine',
            'Scale referral',
            jsonb_build_object('examinedAt', e.examined_at, 'signedAt', e.signed_at, 'examiner', 'Scale Optometrist',
              'history', null, 'acuity', '[]'::jsonb, 'refraction', '[]'::jsonb, 'iop', '[]'::jsonb, 'colour', '[]'::jsonb,
              'fields', '[]'::jsonb, 'diagnoses', '[]'::jsonb, 'prompts', '[]'::jsonb),
            e.signed_at + interval '1 hour',
            case when abs(hashtext(e.id::text)) % 4 = 0 then e.signed_at + interval '30 days' end, 90, e.signed_at, e.signed_at
     from exams e join patients p on p.id = e.patient_id and p.email like '%@scale.dioptra-demo.test'
     cross join (select id from referral_recipients order by name limit 1) r
     where abs(hashtext(e.id::text)) % 50 = 7`,
  );
  // One exam in twenty has a field printout on file (the record only: the benchmark lists, it does not download).
  await step(
    "documents",
    `insert into documents (patient_id, exam_id, kind, description, original_name, content_type, size_bytes, storage_key, uploaded_by_id, created_at)
     select e.patient_id, e.id, 'field_printout', 'Central 24-2 printout', 'fields.pdf', 'application/pdf', 120000,
            'scale/' || e.id, u.id, e.examined_at + interval '20 minutes'
     from exams e join patients p on p.id = e.patient_id and p.email like '%@scale.dioptra-demo.test'
     cross join (select id from users where role = 'owner' order by email limit 1) u
     where abs(hashtext(e.id::text)) % 20 = 3`,
  );
  // A spectacle order for one prescription in three, walked through its states by the same moves
  // the app makes (the database refuses any other), so every state is present.
  await step(
    "optical orders",
    `insert into optical_orders (kind, patient_id, prescription_id, lab_id, frame_id, frame_label, frame_price_minor, lens_type, lens_material, pd_right_mm, pd_left_mm, created_by_id, created_at, state_changed_at)
     select 'spectacles', rx.patient_id, rx.id, l.id, f.id, f.supplier || ' ' || f.model, f.price_minor, 'single_vision', '1.6',
            31.5, 31.5, rx.issued_by_id, rx.issued_at + interval '10 minutes', rx.issued_at + interval '10 minutes'
     from prescriptions rx join patients p on p.id = rx.patient_id and p.email like '%@scale.dioptra-demo.test'
     cross join (select id from labs order by name limit 1) l
     cross join (select id, supplier, model, price_minor from frames order by model limit 1) f
     where abs(hashtext(rx.id::text)) % 3 = 0`,
  );
  for (const [from, to, share] of [
    ["draft", "sent_to_lab", 95],
    ["sent_to_lab", "received", 90],
    ["received", "checked", 95],
    ["checked", "ready_to_collect", 95],
    ["ready_to_collect", "collected", 90],
  ] as const)
    await step(
      `orders ${from} → ${to}`,
      `update optical_orders set state = '${to}' where state = '${from}' and abs(hashtext(id::text || '${to}')) % 100 < ${share}`,
    );
  await step("analyze", "analyze");
  const counts = await c.query(
    "select (select count(*) from patients) as patients, (select count(*) from exams) as exams, (select count(*) from exam_refractions) as refractions, (select count(*) from appointments) as appointments, (select count(*) from invoices) as invoices, (select count(*) from referrals) as referrals, (select count(*) from documents) as documents, (select count(*) from optical_orders) as orders",
  );
  console.log("[scale] totals", counts.rows[0]);
  await c.end();
}

if (import.meta.url === `file://${process.argv[1]}`) {
  generateScale().catch((e) => {
    console.error(e);
    process.exit(1);
  });
}
