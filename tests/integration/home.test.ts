import { describe, expect, it } from "vitest";
import { loader as homeLoader } from "~/routes/home";
import { action as reviewAction } from "~/routes/patients/document-review";
import { pool } from "~/utils/db.server";
import { cookieFor, makeRequest, run, statusOf } from "#tests/support/helpers";
import { homeScenario, type HomeScenario, type Query } from "#tests/support/home-scenario";

const q: Query = async (text, values) => (await pool.query(text, values)).rows;

type Loaded = Awaited<ReturnType<typeof homeLoader>>;
const home = async (who: string) => {
  const result = await run(homeLoader, makeRequest("/", { cookie: await cookieFor(who) }));
  expect(statusOf(result)).toBe(200);
  return (result as Loaded).home;
};

let scenario: HomeScenario | null = null;
const built = async () => (scenario ??= await homeScenario(q));

describe("home pages per role", () => {
  it("the front desk sees who waits, who is still to come, balances due today, move requests, orders ready and failed e-mails", async () => {
    const before = await home("receptionist");
    if (before.role !== "receptionist") throw new Error("expected the front desk's page");
    const s = await built();
    const h = await home("receptionist");
    if (h.role !== "receptionist") throw new Error("expected the front desk's page");

    expect(h.waiting.map((a) => a.id)).toContain(s.appointments.arrived.id);
    expect(h.waiting.find((a) => a.id === s.appointments.arrived.id)?.status).toBe("arrived");
    expect(h.toArrive.map((a) => a.id)).toEqual(
      expect.arrayContaining([s.appointments.booked.id, s.appointments.debtorVisit.id]),
    );
    expect(h.toArrive.map((a) => a.id)).not.toContain(s.appointments.arrived.id);

    // 45.00 billed, 10.00 paid: 35.00 due from a patient who visits today.
    expect(h.balancesDue.total).toBe(before.balancesDue.total + 1);
    expect(h.balancesDue.sumMinor).toBe(before.balancesDue.sumMinor + 3500);
    expect(h.balancesDue.rows.find((r) => r.id === s.invoice.id)?.balanceMinor).toBe(3500);

    expect(h.moveRequests.total).toBe(before.moveRequests.total + 1);
    expect(h.moveRequests.rows[0]?.id).toBe(s.move.id);
    expect(h.readyToCollect.total).toBe(before.readyToCollect.total + 1);
    expect(h.readyToCollect.rows[0]?.id).toBe(s.order.id);
    expect(h.failedMessages.total).toBe(before.failedMessages.total + 1);
    expect(h.failedMessages.rows[0]).toMatchObject({
      id: s.failed.id,
      what: "Appointment reminder",
      error: "Mailbox unavailable (test)",
      href: "/schedule/messages?status=failed",
    });
  });

  it("an optometrist sees only their own day, next patient, unsigned exams, replies and results, and no practice-wide figures", async () => {
    const s = await built();
    const h = await home(s.optometrist.email);
    if (h.role !== "optometrist") throw new Error("expected an optometrist's page");
    // Their own list: exactly the scenario's three visits today, in time order.
    expect(h.appointments.map((a) => a.id)).toEqual([
      s.appointments.arrived.id,
      s.appointments.debtorVisit.id,
      s.appointments.booked.id,
    ]);
    // The patient who has arrived is next, ahead of a later booking.
    expect(h.next?.id).toBe(s.appointments.arrived.id);
    expect(h.unsignedExams.total).toBe(1);
    expect(h.unsignedExams.rows[0]).toMatchObject({ id: s.exam.id, patientId: s.patients.waiting.id });
    expect(h.replies.total).toBe(1);
    expect(h.replies.rows[0]?.referralId).toBe(s.referral.id);
    expect(h.results.total).toBe(1);
    expect(h.results.rows[0]).toMatchObject({
      id: s.document.id,
      href: `/patients/${s.patients.waiting.id}/exams/${s.exam.id}#document-${s.document.id}`,
      uploadedBy: expect.any(String),
    });
    expect(Object.keys(h)).not.toContain("takings");
    expect(JSON.stringify(h)).not.toMatch(/accounts/i);

    // Reading the reply takes it off the list.
    await q(`update referral_replies set read_at = now() where referral_id = $1`, [s.referral.id]);
    const after = await home(s.optometrist.email);
    if (after.role !== "optometrist") throw new Error("expected an optometrist's page");
    expect(after.replies.total).toBe(0);
  });

  it("a result marked reviewed by a clinician leaves the home list; the front desk cannot mark it", async () => {
    const s = await built();
    const path = `/patients/${s.patients.waiting.id}/documents/${s.document.id}/review`;
    const params = { patientId: s.patients.waiting.id, documentId: s.document.id };
    const back = `/patients/${s.patients.waiting.id}/exams/${s.exam.id}`;
    const desk = await run(
      reviewAction as never,
      makeRequest(path, { cookie: await cookieFor("receptionist"), form: { back } }),
      params,
    );
    expect(statusOf(desk)).toBe(403);
    const [untouched] = await q<{ reviewed_at: Date | null }>(`select reviewed_at from documents where id = $1`, [
      s.document.id,
    ]);
    expect(untouched!.reviewed_at).toBeNull();
    // Another patient's id does not reach the document.
    const foreign = await run(
      reviewAction as never,
      makeRequest(`/patients/${s.patients.coming.id}/documents/${s.document.id}/review`, {
        cookie: await cookieFor(s.optometrist.email),
        form: { back },
      }),
      { patientId: s.patients.coming.id, documentId: s.document.id },
    );
    expect(statusOf(foreign)).toBe(404);

    const done = (await run(
      reviewAction as never,
      makeRequest(path, { cookie: await cookieFor(s.optometrist.email), form: { back: "https://elsewhere.test/" } }),
      params,
    )) as Response;
    expect(done.status).toBe(302);
    // Never sent off the patient's record.
    expect(done.headers.get("location")).toBe(`/patients/${s.patients.waiting.id}`);
    const [row] = await q<{ reviewed_by_id: string; reviewed_at: Date }>(
      `select reviewed_by_id, reviewed_at from documents where id = $1`,
      [s.document.id],
    );
    expect(row!.reviewed_by_id).toBe(s.optometrist.id);
    const audited = await q(`select 1 from audit_log where action = 'document.reviewed' and entity_id = $1`, [
      s.document.id,
    ]);
    expect(audited).toHaveLength(1);
    const h = await home(s.optometrist.email);
    if (h.role !== "optometrist") throw new Error("expected an optometrist's page");
    expect(h.results.rows.map((r) => r.id)).not.toContain(s.document.id);
    expect(h.results.total).toBe(0);
  });

  it("the owner's figures count what happened: visits kept and no-shows, exams that led to an order", async () => {
    const s = await built();
    const before = await home("owner");
    if (before.role !== "owner") throw new Error("expected the owner's page");
    // The scenario's signed exam (20 days ago) has a contact-lens order: one more exam, one more that led to an order.
    // A completed visit and a no-show a few minutes ago (this month unless the month began in the last hour).
    const [type] = await q<{ id: string }>(`select id from appointment_types order by name limit 1`);
    const visit = (minutesAgo: number, status: string) =>
      q(
        `insert into appointments (patient_id, provider_id, appointment_type_id, starts_at, ends_at, status)
         values ($1, $2, $3, now() - make_interval(mins => $4), now() - make_interval(mins => $4 - 10), $5)`,
        [s.patients.coming.id, s.optometrist.id, type!.id, minutesAgo, status],
      );
    await visit(50, "completed");
    await visit(30, "no_show");
    const [began] = await q<{ month_began_recently: boolean }>(
      `select date_trunc('month', now() at time zone $1) > (now() at time zone $1) - interval '1 hour' as month_began_recently`,
      [s.timeZone],
    );
    const h = await home("owner");
    if (h.role !== "owner") throw new Error("expected the owner's page");
    if (!began?.month_began_recently) {
      expect(h.visits.kept).toBe(before.visits.kept + 1);
      expect(h.visits.noShow).toBe(before.visits.noShow + 1);
    }
    expect(h.visits.keptShare.whole).toBe(h.visits.kept + h.visits.noShow);
    expect(h.examsToOrders.whole).toBeGreaterThanOrEqual(1);
    expect(h.examsToOrders.part).toBeGreaterThanOrEqual(1);
    expect(h.examsToOrders.part).toBeLessThanOrEqual(h.examsToOrders.whole);
    // Independent count of the same figure.
    const [check] = await q<{ exams: string; ordered: string }>(
      `select count(*) as exams, count(*) filter (where exists (select 1 from prescriptions rx join optical_orders o on o.prescription_id = rx.id where rx.exam_id = e.id and o.state <> 'cancelled')) as ordered
       from exams e where e.status = 'signed' and e.signed_at >= now() - interval '90 days'`,
    );
    expect(h.examsToOrders).toMatchObject({ part: Number(check!.ordered), whole: Number(check!.exams) });
    // The scenario's referral was sent 15 days ago and replied to 14 days later.
    expect(h.referrals.sent).toBeGreaterThanOrEqual(1);
    expect(h.referrals.replied).toBeGreaterThanOrEqual(1);
    expect(h.referrals.medianDaysToReply).not.toBeNull();
  });
});
