/**
 * The seeded demo practice is plausible: visits inside the hours, exams inside their visits,
 * measurements inside physiological ranges, children refracted the way children are, a full
 * working day today (or on the next working day), and every state of the lists shown.
 * Reads only the seeded caseload (its own e-mail domain), not rows other test files add.
 */
import { sql } from "drizzle-orm";
import { PDFDocument } from "pdf-lib";
import { describe, expect, it } from "vitest";
import { checkLensPower, type CatalogueLens } from "~/lib/contact-lens/catalogue";
import { ORDER_STATES } from "~/lib/orders/states";
import { displayStatus } from "~/lib/referrals";
import { localParts } from "~/lib/scheduling/time";
import { loader as letterPdfLoader } from "~/routes/referrals/letter-pdf";
import { loader as referralLoader } from "~/routes/referrals/referral";
import { db } from "~/utils/db.server";
import { storage } from "~/utils/storage.server";
import { sniffType } from "~/models/patients/documents.server";
import { cookieFor, DEMO_EMAIL, makeRequest, run, statusOf } from "#tests/support/helpers";
import { CASELOAD_DOMAIN } from "../../seeds/caseload";
import { DIARY_NOTE } from "../../seeds/diary";
import { DEMO_FILE_PREFIX, seedDocuments } from "../../seeds/documents";

const CASELOAD = `%@${CASELOAD_DOMAIN}`;
const ZONE = "Europe/London";

async function rows<T>(query: ReturnType<typeof sql>) {
  return (await db.execute(query)).rows as T[];
}

describe("the seeded demo practice", () => {
  it("times every caseload exam inside its appointment, the provider's hours and the site's opening hours", async () => {
    const exams = await rows<{ n: number; linked: number }>(sql`
      select count(*)::int as n, count(e.appointment_id)::int as linked
      from exams e join patients p on p.id = e.patient_id where p.email like ${CASELOAD}`);
    expect(exams[0]!.n).toBeGreaterThan(1000);
    // A visit the seed could not place (it would overlap another) stays unlinked; nearly all are linked.
    expect(exams[0]!.linked / exams[0]!.n).toBeGreaterThan(0.98);

    const outside = await rows<{ id: string; why: string }>(sql`
      with x as (
        select e.id, e.examined_at, a.starts_at, a.ends_at, a.site_id, a.provider_id,
          extract(isodow from a.starts_at at time zone ${ZONE})::int as weekday,
          (extract(hour from a.starts_at at time zone ${ZONE}) * 60 + extract(minute from a.starts_at at time zone ${ZONE}))::int as s,
          (extract(hour from a.ends_at at time zone ${ZONE}) * 60 + extract(minute from a.ends_at at time zone ${ZONE}))::int as f
        from exams e join appointments a on a.id = e.appointment_id join patients p on p.id = e.patient_id
        where p.email like ${CASELOAD}
      )
      select id, 'exam outside its appointment' as why from x where examined_at < starts_at or examined_at >= ends_at
      union all
      select x.id, 'outside the site''s opening hours' from x where not exists (
        select 1 from site_opening_hours o where o.site_id = x.site_id and o.weekday = x.weekday and x.s >= o.start_minute and x.f <= o.end_minute)
      union all
      select x.id, 'outside the provider''s working hours' from x where not exists (
        select 1 from working_hours w where w.provider_id = x.provider_id and w.weekday = x.weekday and x.s >= w.start_minute and x.f <= w.end_minute)
      union all
      select x.id, 'in a break' from x where exists (
        select 1 from provider_breaks b where b.provider_id = x.provider_id and b.weekday = x.weekday and x.s < b.end_minute and x.f > b.start_minute)
      union all
      select x.id, 'on a closure' from x join closures c on (x.starts_at at time zone ${ZONE})::date between c.starts_on and c.ends_on
        and (c.site_id is null or c.site_id = x.site_id) and (c.provider_id is null or c.provider_id = x.provider_id)`);
    expect(outside).toEqual([]);

    // Each IOP reading's time of day falls inside the visit.
    const iopOutside = await rows<{ id: string }>(sql`
      select i.id from exam_iop i join exams e on e.id = i.exam_id join appointments a on a.id = e.appointment_id
      join patients p on p.id = e.patient_id
      where p.email like ${CASELOAD}
        and (i.measured_time < (a.starts_at at time zone ${ZONE})::time or i.measured_time > (a.ends_at at time zone ${ZONE})::time)`);
    expect(iopOutside).toEqual([]);
  });

  it("keeps acuity, pressure and refraction inside physiological ranges, with variety", async () => {
    const [acuity] = await rows<{ min: number; max: number; notSix: number; n: number }>(sql`
      select min(log_mar) as min, max(log_mar) as max, count(*) filter (where log_mar <> 0)::int as "notSix", count(*)::int as n
      from exam_acuity a join exams e on e.id = a.exam_id join patients p on p.id = e.patient_id
      where p.email like ${CASELOAD} and a.correction = 'best' and a.distance = 'distance'`);
    // logMAR -0.3 (6/3) is about the best human acuity; 1.0 is 6/60 (common practice).
    expect(acuity!.min).toBeGreaterThanOrEqual(-0.3);
    expect(acuity!.max).toBeLessThanOrEqual(1.3);
    // Best-corrected acuity is not 6/6 for everyone.
    expect(acuity!.notSix / acuity!.n).toBeGreaterThan(0.3);

    const [iop] = await rows<{ min: number; max: number; methods: number; mean: number }>(sql`
      select min(mm_hg) as min, max(mm_hg) as max, count(distinct method)::int as methods, avg(mm_hg)::float as mean
      from exam_iop i join exams e on e.id = i.exam_id join patients p on p.id = e.patient_id where p.email like ${CASELOAD}`);
    // Mean adult IOP is 15–16 mmHg with a standard deviation near 3, so 21 mmHg is two deviations
    // above it (European Glaucoma Society, Terminology and Guidelines for Glaucoma, 1.1; Colton and
    // Ederer, "The distribution of intraocular pressures in the general population", 1980). The demo
    // adds ocular hypertension and emergencies, so the bounds are wide but physiological.
    expect(iop!.min).toBeGreaterThanOrEqual(6);
    expect(iop!.max).toBeLessThanOrEqual(60);
    expect(iop!.mean).toBeGreaterThan(12);
    expect(iop!.mean).toBeLessThan(19);
    expect(iop!.methods).toBeGreaterThanOrEqual(3);

    const [rx] = await rows<{
      minS: number;
      maxS: number;
      minC: number;
      maxC: number;
      minAdd: number;
      maxAdd: number;
    }>(sql`
      select min(sphere) as "minS", max(sphere) as "maxS", min(cylinder) as "minC", max(cylinder) as "maxC",
        min(add_power) as "minAdd", max(add_power) as "maxAdd"
      from exam_refractions r join exams e on e.id = r.exam_id join patients p on p.id = e.patient_id
      where p.email like ${CASELOAD}`);
    // Spheres beyond ±20 D and cylinders beyond 6 D are rare in a community practice; a reading
    // addition runs from about +0.75 D in the early forties to +2.50–3.00 D (common practice).
    expect(rx!.minS).toBeGreaterThanOrEqual(-20);
    expect(rx!.maxS).toBeLessThanOrEqual(20);
    expect(rx!.minC).toBeGreaterThanOrEqual(-6);
    expect(rx!.maxC).toBeLessThanOrEqual(0);
    expect(rx!.minAdd).toBeGreaterThanOrEqual(0.5);
    expect(rx!.maxAdd).toBeLessThanOrEqual(3.5);

    // Presbyopic additions rise with age.
    const adds = await rows<{ band: string; mean: number }>(sql`
      select case when age(e.examined_at, p.date_of_birth::timestamptz) < interval '55 years' then 'younger' else 'older' end as band,
        avg(r.add_power)::float as mean
      from exam_refractions r join exams e on e.id = r.exam_id join patients p on p.id = e.patient_id
      where p.email like ${CASELOAD} and r.kind = 'final' and r.add_power is not null group by 1`);
    const mean = (band: string) => adds.find((a) => a.band === band)!.mean;
    expect(mean("older")).toBeGreaterThan(mean("younger") + 0.5);
  });

  it("never gives a child under 7 a subjective refraction without a cycloplegic one, and has the conditions of a real list", async () => {
    const children = await rows<{ id: string }>(sql`
      select e.id from exams e join patients p on p.id = e.patient_id
      where p.email like ${CASELOAD} and age(e.examined_at, p.date_of_birth::timestamptz) < interval '7 years'
        and exists (select 1 from exam_refractions r where r.exam_id = e.id and r.kind = 'subjective')
        and not exists (select 1 from exam_refractions r where r.exam_id = e.id and r.kind = 'cycloplegic')`);
    expect(children).toEqual([]);
    const [cyclo] = await rows<{ n: number }>(sql`
      select count(distinct r.exam_id)::int as n from exam_refractions r join exams e on e.id = r.exam_id
      join patients p on p.id = e.patient_id where p.email like ${CASELOAD} and r.kind = 'cycloplegic'`);
    expect(cyclo!.n).toBeGreaterThan(10);

    const dx = await rows<{ code: string; n: number }>(sql`
      select d.code, count(distinct e.patient_id)::int as n from exam_diagnoses d join exams e on e.id = d.exam_id
      join patients p on p.id = e.patient_id where p.email like ${CASELOAD} group by 1`);
    const patientsWith = (code: string) => dx.find((d) => d.code === code)?.n ?? 0;
    for (const code of ["H25.9", "H40.0", "H40.1", "H35.3", "H53.0", "H36.0", "H52.4", "H52.1", "H52.0"])
      expect(patientsWith(code), code).toBeGreaterThan(0);

    // Cataract comes with reduced best-corrected acuity.
    const [cataract] = await rows<{ worst: number }>(sql`
      select max(a.log_mar) as worst from exam_acuity a join exam_diagnoses d on d.exam_id = a.exam_id and d.code = 'H25.9'
      where a.correction = 'best'`);
    expect(cataract!.worst).toBeGreaterThanOrEqual(0.3);
  });

  it("gives each optometrist a full list today, or on the next working day when the practice is shut", async () => {
    const tz = ZONE;
    const today = localParts(new Date(), tz).date;
    const [day] = await rows<{ d: string }>(sql`
      select d::date::text as d from generate_series(${today}::date, ${today}::date + 14, interval '1 day') d
      where extract(isodow from d) <= 5
        and not exists (select 1 from closures c where c.kind <> 'leave' and c.site_id is null and d::date between c.starts_on and c.ends_on)
      order by d limit 1`);
    const lists = await rows<{ email: string; n: number }>(sql`
      select u.email, count(a.id)::int as n from users u
      join working_hours w on w.provider_id = u.id and w.weekday = extract(isodow from ${day!.d}::date)
      left join appointments a on a.provider_id = u.id and a.notes = ${DIARY_NOTE}
        and (a.starts_at at time zone ${tz})::date = ${day!.d}::date
      where u.role in ('owner', 'optometrist') and u.active and u.email like '%@dioptra-demo.test'
      group by u.email`);
    expect(lists.length).toBeGreaterThanOrEqual(2);
    for (const l of lists) expect(l.n, l.email).toBeGreaterThanOrEqual(12);

    // The coming fortnight is mostly booked: at least half the working days ahead have 8 or more visits each.
    const [ahead] = await rows<{ days: number }>(sql`
      select count(*)::int as days from (
        select (starts_at at time zone ${tz})::date, provider_id from appointments
        where notes = ${DIARY_NOTE} and starts_at > now() group by 1, 2 having count(*) >= 8) x`);
    expect(ahead!.days).toBeGreaterThanOrEqual(10);
  });
});

describe("the seeded lists", () => {
  it("shows invoices, referrals, recalls and reminders in every state", async () => {
    const invoiceStates = await rows<{ status: string }>(sql`select distinct status::text from invoices`);
    expect(invoiceStates.map((s) => s.status).sort()).toEqual(
      expect.arrayContaining(["draft", "open", "partially_paid", "paid", "void"]),
    );
    const [kinds] = await rows<{ online: number; refunded: number; overdue: number }>(sql`
      select
        (select count(*)::int from payments where method = 'card_online' and status = 'succeeded') as online,
        (select count(*)::int from refunds) as refunded,
        (select count(*)::int from invoices where status in ('open', 'partially_paid') and issued_at < now() - interval '30 days') as overdue`);
    expect(kinds!.online).toBeGreaterThan(0);
    expect(kinds!.refunded).toBeGreaterThan(0);
    expect(kinds!.overdue).toBeGreaterThan(0);
    // The takings stay reconciled: each invoice's paid amount is its payments less refunds.
    const unreconciled = await rows<{ id: string }>(sql`
      select i.id from invoices i where i.paid_minor <> coalesce((select sum(p.amount_minor - p.refunded_minor)
        from payments p where p.invoice_id = i.id and p.status = 'succeeded'), 0) and i.status <> 'void'`);
    expect(unreconciled).toEqual([]);

    const referrals = await rows<{
      status: "draft" | "queued" | "sent" | "acknowledged" | "replied" | "withdrawn";
      sentAt: string | null;
      appointmentOn: string | null;
      timeFrameDays: number | null;
    }>(sql`select status, sent_at as "sentAt", appointment_on::text as "appointmentOn", time_frame_days as "timeFrameDays"
      from referrals`);
    const shown = new Set(
      referrals.map((r) => displayStatus({ ...r, sentAt: r.sentAt ? new Date(r.sentAt) : null }, new Date(), ZONE)),
    );
    for (const state of ["draft", "sent", "acknowledged", "replied", "overdue", "withdrawn"] as const)
      expect(shown.has(state), state).toBe(true);

    const [messages] = await rows<{ recalls: number; reminders: number }>(sql`
      select (select count(*)::int from recall_messages where status = 'sent') as recalls,
        (select count(*)::int from appointment_messages where kind = 'reminder' and status = 'sent') as reminders`);
    expect(messages!.recalls).toBeGreaterThan(0);
    expect(messages!.reminders).toBeGreaterThan(0);
  });

  it("shows orders in every state, made after their prescription, and a share of recent exams that led to one", async () => {
    const states = await rows<{ state: string }>(sql`select distinct state::text from optical_orders`);
    expect(states.map((s) => s.state).sort()).toEqual([...ORDER_STATES].sort());
    const early = await rows<{ id: string }>(sql`
      select o.id from optical_orders o join prescriptions rx on rx.id = o.prescription_id
      where o.created_at < rx.issued_at`);
    expect(early).toEqual([]);
    // The owner's home counts exams signed in its window whose prescription was ordered here.
    const [share] = await rows<{ exams: number; ordered: number }>(sql`
      select count(*)::int as exams, count(*) filter (where exists (select 1 from optical_orders o
        join prescriptions rx on rx.id = o.prescription_id where rx.exam_id = e.id and o.state <> 'cancelled'))::int as ordered
      from exams e where e.status = 'signed' and e.signed_at >= now() - interval '90 days'`);
    expect(share!.ordered / share!.exams).toBeGreaterThan(0.05);
    expect(share!.ordered / share!.exams).toBeLessThan(0.6);
  });

  it("gives each sent referral a snapshot of its exam, and its page and letter open", async () => {
    const sent = await rows<{ id: string; acuity: number; refraction: number; iop: number; prompts: number }>(sql`
      select id, jsonb_array_length(snapshot->'acuity')::int as acuity,
        jsonb_array_length(snapshot->'refraction')::int as refraction,
        jsonb_array_length(snapshot->'iop')::int as iop, jsonb_array_length(snapshot->'prompts')::int as prompts
      from referrals where status <> 'draft' and created_by_id in (select id from users where email like '%@dioptra-demo.test')
        -- Only the seed's letters: other test files write referrals as the demo clinicians at the same time.
        and patient_id in (select id from patients where email like ${CASELOAD})
      order by created_at`);
    expect(sent.length).toBeGreaterThan(4);
    for (const r of sent) {
      expect(r.acuity, r.id).toBeGreaterThan(0);
      expect(r.refraction, r.id).toBeGreaterThan(0);
    }
    // The triage cases' letters carry the prompts that raised them.
    expect(sent.some((r) => r.prompts > 0)).toBe(true);

    const cookie = await cookieFor("optometrist");
    const id = sent[0]!.id;
    const page = await run(referralLoader as never, makeRequest(`/referrals/${id}`, { cookie }), { referralId: id });
    expect(statusOf(page)).toBe(200);
    const pdf = await run(letterPdfLoader as never, makeRequest(`/referrals/${id}/letter.pdf`, { cookie }), {
      referralId: id,
    });
    expect(statusOf(pdf)).toBe(200);
    expect((pdf as Response).headers.get("content-type")).toContain("application/pdf");
  });

  it("fits contact-lens wearers with different catalogue lenses, in powers each lens is made in", async () => {
    const eyes = await rows<{
      rx: string;
      eye: string;
      sphere: number;
      cylinder: number;
      axis: number;
      baseCurveMm: number;
      diameterMm: number;
      lens: CatalogueLens | null;
    }>(sql`
      select rx.id as rx, pe.eye, pe.sphere, pe.cylinder, pe.axis, pe.base_curve_mm as "baseCurveMm",
        pe.diameter_mm as "diameterMm",
        (select jsonb_build_object('id', l.id, 'manufacturer', l.manufacturer, 'name', l.name, 'material', l.material,
          'replacement', l.replacement, 'baseCurvesMm', l.base_curves_mm, 'diametersMm', l.diameters_mm,
          'sphereMin', l.sphere_min, 'sphereMax', l.sphere_max, 'sphereStep', l.sphere_step, 'cylinders', l.cylinders,
          'axisStep', l.axis_step) from contact_lenses l where l.id = pe.contact_lens_id) as lens
      from prescriptions rx join prescription_eyes pe on pe.prescription_id = rx.id
      join patients p on p.id = rx.patient_id
      where p.email like ${CASELOAD} and rx.kind = 'contact_lens'`);
    expect(eyes.length).toBeGreaterThan(10);
    const lensIds = new Set(eyes.map((e) => e.lens?.id));
    expect(lensIds.has(undefined)).toBe(false);
    expect(lensIds.size).toBeGreaterThan(2);
    const wearersByLens = new Set(eyes.map((e) => e.lens!.replacement));
    expect(wearersByLens.size).toBeGreaterThan(1);
    for (const e of eyes) {
      const lens = e.lens!;
      expect(checkLensPower(lens, e, `${e.rx} ${e.eye}`)).toEqual([]);
      expect(lens.baseCurvesMm).toContain(e.baseCurveMm);
      expect(lens.diametersMm).toContain(e.diameterMm);
    }
  });

  it("records a parent or guardian for the caseload's children", async () => {
    const [children] = await rows<{ n: number; with: number; badEmail: number }>(sql`
      select count(*)::int as n, count(*) filter (where guardian_name <> '' and guardian_relationship <> '')::int as with,
        count(*) filter (where guardian_email <> '' and guardian_email not like '%.test')::int as "badEmail"
      from patients where email like ${CASELOAD} and date_of_birth > (current_date - interval '15 years')::date`);
    expect(children!.n).toBeGreaterThan(5);
    expect(children!.with).toBe(children!.n);
    expect(children!.badEmail).toBe(0);
  });
});

type Doc = {
  kind: string;
  content_type: string;
  storage_key: string;
  thumbnail_key: string | null;
  reviewed: boolean;
  mine: boolean;
  by_desk: boolean;
  after_exam: boolean;
  past: boolean;
};

describe("the seeded results", () => {
  it("puts field printouts and fundus photographs on recent exams, some still to be read by the optometrist", async () => {
    class Rollback extends Error {}
    const out = await db
      .transaction(async (tx) => {
        const added = await seedDocuments(tx, storage);
        const again = await seedDocuments(tx, storage);
        const docs = (
          await tx.execute<Doc>(sql`
            select d.kind, d.content_type, d.storage_key, d.thumbnail_key, d.reviewed_at is not null as reviewed,
              u.email = ${DEMO_EMAIL.optometrist} as mine, up.role = 'receptionist' as by_desk,
              d.created_at > e.signed_at as after_exam, d.created_at <= clock_timestamp() and coalesce(d.reviewed_at, d.created_at) <= clock_timestamp() as past
            from documents d join exams e on e.id = d.exam_id join users u on u.id = e.optometrist_id
              join users up on up.id = d.uploaded_by_id
            where d.original_name like ${DEMO_FILE_PREFIX + "%"}`)
        ).rows;
        throw new Rollback(JSON.stringify({ added, again, docs }));
      })
      .catch((e: unknown) => {
        if (e instanceof Rollback) return JSON.parse(e.message) as { added: number; again: number; docs: Doc[] };
        throw e;
      });
    expect(out.added).toBeGreaterThanOrEqual(9);
    expect(out.again).toBe(0); // idempotent
    expect(out.docs).toHaveLength(out.added);
    const toRead = out.docs.filter((d) => d.mine && !d.reviewed);
    expect(toRead.length).toBeGreaterThanOrEqual(3);
    expect(out.docs.some((d) => d.mine && d.reviewed)).toBe(true);
    expect(new Set(out.docs.map((d) => d.kind))).toEqual(new Set(["field_printout", "fundus_photo"]));
    for (const d of out.docs) {
      expect(d.by_desk && d.after_exam && d.past).toBe(true);
      // The stored bytes are what the row says they are (checked the way an upload is checked).
      const bytes = (await storage.get(d.storage_key))!;
      expect(sniffType(bytes)?.contentType).toBe(d.content_type);
      if (d.kind === "fundus_photo") expect(d.thumbnail_key).not.toBeNull();
    }
    const field = out.docs.find((d) => d.kind === "field_printout")!;
    const pdf = await PDFDocument.load((await storage.get(field.storage_key))!);
    expect(pdf.getPageCount()).toBe(1);
  });
});
