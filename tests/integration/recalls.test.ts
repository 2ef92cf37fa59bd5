import { eq } from "drizzle-orm";
import { beforeAll, describe, expect, it } from "vitest";
import { action as recallsAction, loader as recallsLoader } from "~/routes/schedule/recalls";
import { loader as progressLoader } from "~/routes/schedule/recall-progress";
import { appointments, examAssessment, exams, recallMessages, sites } from "~/db/schema";
import { addMonths } from "~/lib/scheduling/recall";
import { localParts, wallTimeToInstant } from "~/lib/scheduling/time";
import { db } from "~/utils/db.server";
import { deliverRecall, recallList } from "~/models/schedule/recalls.server";
import { cookieFor, dataOf, mailTo, makeRequest, run, statusOf } from "#tests/support/helpers";
import { demoIds, newPatient, pastVisit } from "./schedule-fixtures";

let ids: Awaited<ReturnType<typeof demoIds>>;
let today: string;
beforeAll(async () => {
  ids = await demoIds();
  today = localParts(new Date(), "Europe/London").date;
});

/** A completed routine exam `months` ago at 10:00 practice time (minute offset keeps rows apart). */
async function examAgo(patientId: string, months: number, minute = 0) {
  const day = addMonths(today, -months);
  return pastVisit(
    patientId,
    ids.owner.id,
    ids.examType.id,
    wallTimeToInstant(day, 17 * 60 + minute * 31, "Europe/London")!,
  );
}

describe("recall list", () => {
  it("lists adults due 24 months and children 12 months after their last routine exam (practice defaults), not those seen recently", async () => {
    const adult = await newPatient({ dateOfBirth: "1970-05-01" });
    const child = await newPatient({ dateOfBirth: addMonths(today, -12 * 9) });
    const recent = await newPatient({ dateOfBirth: "1970-05-01" });
    await examAgo(adult.id, 25, 1);
    await examAgo(child.id, 13, 2);
    await examAgo(recent.id, 6, 3);
    const { rows } = await recallList({ dueBy: today });
    const byId = new Map(rows.map((r) => [r.patientId, r]));
    expect(byId.get(adult.id)).toMatchObject({
      months: 24,
      rule: "adult default",
      dueDate: addMonths(addMonths(today, -25), 24),
    });
    expect(byId.get(child.id)).toMatchObject({
      months: 12,
      rule: "child default",
      dueDate: addMonths(addMonths(today, -13), 12),
    });
    expect(byId.has(recent.id)).toBe(false);
    const children = await recallList({ dueBy: today, group: "child" });
    expect(children.rows.map((r) => r.patientId)).toContain(child.id);
    expect(children.rows.map((r) => r.patientId)).not.toContain(adult.id);
  });

  it("sends recalls in bulk with progress, records each, never twice for the same due date, and skips opted-out patients", async () => {
    const a = await newPatient({ dateOfBirth: "1965-01-01" });
    const b = await newPatient({ dateOfBirth: "1966-01-01" });
    // Takes appointment reminders but not recalls: the two choices are apart.
    const out = await newPatient({ dateOfBirth: "1967-01-01", recallsByEmail: false });
    for (const [i, p] of [a, b, out].entries()) await examAgo(p.id, 30, 10 + i);
    const cookie = await cookieFor("receptionist");
    const page = dataOf<{ rows: { patientId: string }[] }>(
      await run(recallsLoader, makeRequest(`/schedule/recalls?dueBy=${today}`, { cookie })),
    );
    expect(page.rows.map((r) => r.patientId)).toEqual(expect.arrayContaining([a.id, b.id, out.id]));

    const form = new URLSearchParams([
      ["intent", "send"],
      ["patientId", a.id],
      ["patientId", b.id],
      ["patientId", out.id],
    ]);
    const req = new Request("http://127.0.0.1:3000/schedule/recalls", {
      method: "POST",
      headers: { cookie, "content-type": "application/x-www-form-urlencoded" },
      body: form,
    });
    const started = dataOf<{ batch: { batchId: string; total: number } }>(await run(recallsAction, req));
    expect(started.batch.total).toBe(3);
    const progress = async () =>
      (
        await (run(progressLoader, makeRequest(`/schedule/recalls/batches/${started.batch.batchId}`, { cookie }), {
          batchId: started.batch.batchId,
        }) as Promise<Response>)
      ).json() as Promise<{ done: number; sent: number; skipped: number; finished: boolean }>;
    expect(await progress()).toMatchObject({ done: 0, finished: false });
    const queued = await db.select().from(recallMessages).where(eq(recallMessages.batchId, started.batch.batchId));
    for (const r of queued) await deliverRecall(r.id);
    expect(await progress()).toMatchObject({ done: 3, sent: 2, skipped: 1, finished: true });
    const [mail] = await mailTo(a.email!);
    expect(mail!.subject).toMatch(/^Your eye examination is due/);
    expect(await mailTo(out.email!)).toHaveLength(0);
    // Again for the same patients: nothing new is queued, and delivering again sends nothing.
    const again = dataOf<{ batch: { total: number; alreadyRecalled: number } }>(
      await run(
        recallsAction,
        new Request(req.url, {
          method: "POST",
          headers: { cookie, "content-type": "application/x-www-form-urlencoded" },
          body: form,
        }),
      ),
    );
    expect(again.batch).toMatchObject({ total: 0, alreadyRecalled: 3 });
    for (const r of queued) expect(await deliverRecall(r.id)).toBe("already done");
    expect(await mailTo(a.email!)).toHaveLength(1);
    // Recalled patients leave the default list.
    const after = await recallList({ dueBy: today });
    expect(after.rows.map((r) => r.patientId)).not.toContain(a.id);
  });

  it("counts an exam recorded without an appointment, and the optometrist's planned interval wins", async () => {
    const p = await newPatient({ dateOfBirth: "1950-02-02" });
    const [exam] = await db
      .insert(exams)
      .values({
        patientId: p.id,
        optometristId: ids.optometrist.id,
        examinedAt: wallTimeToInstant(addMonths(today, -7), 10 * 60, "Europe/London")!,
        status: "in_progress",
      })
      .returning();
    await db.insert(examAssessment).values({ examId: exam!.id, recallMonths: 6 });
    const { rows } = await recallList({ dueBy: today });
    expect(rows.find((r) => r.patientId === p.id)).toMatchObject({
      months: 6,
      rule: "optometrist's plan",
      lastVisitType: "Eye exam",
      dueDate: addMonths(addMonths(today, -7), 6),
    });
  });

  it("records where each recall asks the patient to come (the site of their last visit, else the default site) and the e-mail names it", async () => {
    const [main] = await db.select().from(sites).where(eq(sites.isDefault, true));
    const [hill] = await db.select().from(sites).where(eq(sites.name, "Hillcrest Parade"));
    const there = await newPatient({ dateOfBirth: "1961-03-03" });
    const nowhere = await newPatient({ dateOfBirth: "1962-04-04" });
    // An exam at the main site, then a later one at Hillcrest: the last visit wins.
    await examAgo(there.id, 30, 5);
    const later = await examAgo(there.id, 29, 6);
    await db.update(appointments).set({ siteId: hill!.id }).where(eq(appointments.id, later.id));
    // An exam recorded without an appointment has no site: the default site.
    await db.insert(exams).values({
      patientId: nowhere.id,
      optometristId: ids.optometrist.id,
      examinedAt: wallTimeToInstant(addMonths(today, -30), 11 * 60, "Europe/London")!,
      status: "in_progress",
    });

    const { rows } = await recallList({ dueBy: today });
    expect(rows.find((r) => r.patientId === there.id)).toMatchObject({
      siteId: hill!.id,
      siteName: "Hillcrest Parade",
    });
    expect(rows.find((r) => r.patientId === nowhere.id)).toMatchObject({ siteId: main!.id, siteName: main!.name });
    const cookie = await cookieFor("receptionist");
    const page = dataOf<{ multiSite: boolean; rows: { patientId: string; siteName: string }[] }>(
      await run(recallsLoader, makeRequest(`/schedule/recalls?dueBy=${today}`, { cookie })),
    );
    expect(page.multiSite).toBe(true);
    expect(page.rows.find((r) => r.patientId === there.id)?.siteName).toBe("Hillcrest Parade");

    const form = new URLSearchParams([
      ["intent", "send"],
      ["patientId", there.id],
      ["patientId", nowhere.id],
    ]);
    const started = dataOf<{ batch: { batchId: string; total: number } }>(
      await run(
        recallsAction,
        new Request("http://127.0.0.1:3000/schedule/recalls", {
          method: "POST",
          headers: { cookie, "content-type": "application/x-www-form-urlencoded" },
          body: form,
        }),
      ),
    );
    expect(started.batch.total).toBe(2);
    const queued = await db.select().from(recallMessages).where(eq(recallMessages.batchId, started.batch.batchId));
    expect(Object.fromEntries(queued.map((r) => [r.patientId, r.siteId]))).toEqual({
      [there.id]: hill!.id,
      [nowhere.id]: main!.id,
    });
    for (const r of queued) expect(await deliverRecall(r.id)).toBe("sent");
    const [toThere] = await mailTo(there.email!);
    expect(toThere!.text).toContain("Hillcrest Parade, 3 Hillcrest Parade, Brackenford, BF6 2HP");
    expect(toThere!.text).toContain("call us on 01632 960 733");
    const [toNowhere] = await mailTo(nowhere.email!);
    expect(toNowhere!.text).toContain(main!.name);
    if (main!.addressLine1) expect(toNowhere!.text).toContain(main!.addressLine1);
    expect(toNowhere!.text).not.toContain("Hillcrest");
  });

  it("refuses an empty selection with 400", async () => {
    const req = new Request("http://127.0.0.1:3000/schedule/recalls", {
      method: "POST",
      headers: { cookie: await cookieFor("receptionist"), "content-type": "application/x-www-form-urlencoded" },
      body: "intent=send",
    });
    expect(statusOf(await run(recallsAction, req))).toBe(400);
  });
});
