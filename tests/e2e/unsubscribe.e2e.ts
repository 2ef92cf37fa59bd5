/**
 * The opt-out link of a reminder, end to end: the reminder is sent by the worker, its
 * List-Unsubscribe header leads to a signed-out page that works by keyboard and passes axe, and a
 * mail program's one-click POST (RFC 8058) is answered over plain HTTP without a session.
 */
import pg from "pg";
import { afterAll, beforeAll, describe, expect, inject, it } from "vitest";
import { DEMO, expectAccessible, screenshot, signIn, useBrowser } from "./fixtures";

const browser = useBrowser();
let client: pg.Client;
const q = async <T extends pg.QueryResultRow>(text: string, values: unknown[] = []) =>
  (await client.query<T>(text, values)).rows;

type Message = { id: string; subject: string; headers: Record<string, string>; html: string };
async function messagesTo(to: string): Promise<Message[]> {
  const port = inject("mailApiPort");
  const list = (await (await fetch(`http://127.0.0.1:${port}/messages?to=${encodeURIComponent(to)}`)).json()) as {
    id: string;
  }[];
  return Promise.all(
    list.map(async (m) => (await (await fetch(`http://127.0.0.1:${port}/messages/${m.id}`)).json()) as Message),
  );
}

async function patientWithVisit(tag: string) {
  const email = `unsub-${tag}-${Date.now()}@example.test`;
  const [p] = await q<{ id: string }>(
    "insert into patients (first_name, last_name, date_of_birth, email) values ('Iga', 'Świątek-Test', '1990-04-01', $1) returning id",
    [email],
  );
  const [optom] = await q<{ id: string }>("select id from users where email = $1", [DEMO.optometrist]);
  const [type] = await q<{ id: string }>("select id from appointment_types where name = 'Comprehensive eye exam'");
  // The demo's clinician has visits booked weeks ahead: try early-morning slots until one is free
  // (the database refuses an overlap), so the test never depends on the seed's random diary.
  for (let attempt = 0; ; attempt++) {
    const start = new Date(Date.now() + (40 + Math.floor(Math.random() * 120)) * 86_400_000);
    start.setUTCHours(6, Math.floor(Math.random() * 8) * 15, 0, 0);
    try {
      const [a] = await q<{ id: string }>(
        "insert into appointments (patient_id, provider_id, appointment_type_id, starts_at, ends_at, status) values ($1, $2, $3, $4, $5, 'booked') returning id",
        [p!.id, optom!.id, type!.id, start, new Date(start.getTime() + 30 * 60_000)],
      );
      return { patientId: p!.id, email, appointmentId: a!.id };
    } catch (error) {
      if ((error as { code?: string }).code !== "23P01" || attempt >= 20) throw error;
    }
  }
}

beforeAll(async () => {
  client = new pg.Client({ connectionString: inject("e2eDatabaseUrl") });
  await client.connect();
});
afterAll(async () => {
  await client?.end();
});

describe("unsubscribing from reminders", () => {
  it("follows the reminder's List-Unsubscribe link, confirms by keyboard, and stops reminders", async () => {
    const { patientId, email, appointmentId } = await patientWithVisit("page");
    const desk = await browser.newPage();
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL((u) => u.pathname === "/");
    await desk.goto(`/schedule/appointments/${appointmentId}`);
    await desk.getByRole("button", { name: "Send the reminder now" }).click();
    await expect.poll(async () => (await messagesTo(email)).length, { timeout: 20_000 }).toBe(1);
    const [mail] = await messagesTo(email);
    expect(mail!.headers["list-unsubscribe-post"]).toBe("List-Unsubscribe=One-Click");
    const url = new URL(/^<([^>]+)>$/.exec(mail!.headers["list-unsubscribe"]!)![1]!);

    const patient = await browser.newPage();
    await patient.goto(url.pathname);
    await patient.getByRole("heading", { name: "Stop appointment e-mails?" }).waitFor();
    await expectAccessible(patient);
    await screenshot(patient, "unsubscribe-ask");
    // Nothing changes by opening the page.
    expect(
      (await q<{ r: boolean }>("select reminders_by_email as r from patients where id = $1", [patientId]))[0]!.r,
    ).toBe(true);
    // Keyboard only: the button is reachable with Tab and pressed with Enter.
    const button = patient.getByRole("button", { name: "Stop these e-mails" });
    for (let i = 0; i < 5 && !(await button.evaluate((el) => el === document.activeElement)); i++)
      await patient.keyboard.press("Tab");
    await patient.keyboard.press("Enter");
    await patient.getByRole("heading", { name: "You will get no more of these e-mails" }).waitFor();
    await expectAccessible(patient);
    await screenshot(patient, "unsubscribe-done");
    expect(
      (
        await q<{ r: boolean; c: boolean }>(
          "select reminders_by_email as r, recalls_by_email as c from patients where id = $1",
          [patientId],
        )
      )[0],
    ).toEqual({ r: false, c: true });
  }, 120_000);

  it("answers a mail program's one-click POST without a session or Origin, and refuses a forged token", async () => {
    const { patientId, email, appointmentId } = await patientWithVisit("oneclick");
    const desk = await browser.newPage();
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL((u) => u.pathname === "/");
    await desk.goto(`/schedule/appointments/${appointmentId}`);
    await desk.getByRole("button", { name: "Send the reminder now" }).click();
    await expect.poll(async () => (await messagesTo(email)).length, { timeout: 20_000 }).toBe(1);
    const [mail] = await messagesTo(email);
    const url = /^<([^>]+)>$/.exec(mail!.headers["list-unsubscribe"]!)![1]!;
    // RFC 8058 §3.2: the receiver POSTs "List-Unsubscribe=One-Click", with no cookies.
    const forged = url.replace(/.$/, (c) => (c === "A" ? "B" : "A"));
    const bad = await fetch(forged, {
      method: "POST",
      headers: { "content-type": "application/x-www-form-urlencoded" },
      body: "List-Unsubscribe=One-Click",
      redirect: "manual",
    });
    expect(bad.status).toBe(404);
    expect(
      (await q<{ r: boolean }>("select reminders_by_email as r from patients where id = $1", [patientId]))[0]!.r,
    ).toBe(true);
    const res = await fetch(url, {
      method: "POST",
      headers: { "content-type": "application/x-www-form-urlencoded" },
      body: "List-Unsubscribe=One-Click",
      redirect: "manual",
    });
    expect(res.status).toBe(200);
    expect(
      (await q<{ r: boolean }>("select reminders_by_email as r from patients where id = $1", [patientId]))[0]!.r,
    ).toBe(false);
  });
});
