import { execFileSync } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import pg from "pg";
import type { Page } from "playwright-core";
import { afterAll, beforeAll, describe, expect, inject, it } from "vitest";
import { baseUrl, DEMO, expectAccessible, mailTo, screenshot, signIn, useBrowser } from "./fixtures";

const browser = useBrowser();
const PHONE = { width: 390, height: 844 };
const ready = (page: Page) => page.waitForLoadState("networkidle");
let client: pg.Client;
let patient: { id: string; email: string; first_name: string; last_name: string; date_of_birth: string };
const q = async <T extends pg.QueryResultRow>(text: string, values: unknown[] = []) =>
  (await client.query<T>(text, values)).rows;

/** A seeded patient with a current spectacle prescription and an e-mail address but no online account yet, with a visit next month. */
beforeAll(async () => {
  client = new pg.Client({ connectionString: inject("e2eDatabaseUrl") });
  await client.connect();
  patient = (
    await q(
      `select p.id, p.email, p.first_name, p.last_name, p.date_of_birth::text from patients p
      where p.email is not null
        and exists (select 1 from prescriptions r where r.patient_id = p.id and r.kind = 'spectacle' and r.expires_on >= current_date)
        and not exists (select 1 from users u where u.patient_id = p.id or lower(u.email) = lower(p.email))
      order by p.last_name limit 1`,
    )
  )[0] as typeof patient;
  const [optom] = await q<{ id: string }>("select id from users where email = $1", [DEMO.optometrist]);
  const [type] = await q<{ id: string }>("select id from appointment_types where name = 'Comprehensive eye exam'");
  const start = new Date(Date.now() + 35 * 86_400_000);
  start.setUTCHours(9, 0, 0, 0);
  await q(
    "insert into appointments (patient_id, provider_id, appointment_type_id, starts_at, ends_at, status) values ($1, $2, $3, $4, $5, 'confirmed')",
    [patient.id, optom!.id, type!.id, start, new Date(start.getTime() + 30 * 60_000)],
  );
});
afterAll(async () => {
  await client?.end();
});

describe("the patient portal on a phone", () => {
  it("accepts the invite, sees the visit, pays an invoice, downloads the prescription and switches reminders off", async () => {
    expect(patient).toBeTruthy();
    // The front desk raises an invoice and invites the patient to the portal.
    const desk = await browser.newPage();
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL((u) => u.pathname === "/");
    await desk.goto("/billing/invoices/new");
    await ready(desk);
    // The patient field searches the whole register as you type.
    await desk.getByRole("combobox", { name: "Patient" }).fill(`${patient.last_name} ${patient.first_name}`);
    await desk
      .getByRole("option", { name: new RegExp(`^${`${patient.last_name}, ${patient.first_name}`}`) })
      .first()
      .click();
    await expect
      .poll(() => desk.getByTestId("chosen-patient").textContent())
      .toContain(`${patient.last_name}, ${patient.first_name}`);
    await desk.getByLabel("Quantity of Contact lens aftercare check").fill("1");
    await desk.getByRole("button", { name: "Create draft invoice" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent()).toContain("Draft invoice created");
    await desk.getByRole("button", { name: "Issue invoice" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent()).toMatch(/Issued as/);
    await desk.goto(`/patients/${patient.id}`);
    await ready(desk);
    await desk.getByRole("button", { name: "Invite to the patient portal" }).click();
    await expect.poll(() => desk.getByRole("status").filter({ hasText: "Invitation sent to" }).count()).toBe(1);
    await expectAccessible(desk);

    // On the phone: the invitation from the mailbox page, then a password.
    const phone = await browser.newPage({ viewport: PHONE });
    await phone.goto("/dev/mailbox");
    await phone
      .getByRole("link", { name: /Your online page at Larkspur Lane Eye Care/ })
      .first()
      .click();
    await phone.getByRole("link", { name: /reset-password\?token=/ }).click();
    await expect.poll(() => phone.getByRole("heading", { level: 1 }).textContent()).toBe("Set your password");
    await ready(phone);
    await phone.getByLabel("New password").fill("my-portal-pass-1");
    await phone.getByLabel("Type it again").fill("my-portal-pass-1");
    await phone.getByRole("button", { name: "Save password" }).click();
    await phone.waitForURL("**/login");
    await signIn(phone, patient.email, "my-portal-pass-1");
    await phone.waitForURL("**/portal");
    await expect
      .poll(() => phone.getByRole("heading", { level: 1 }).textContent())
      .toBe(`Hello, ${patient.first_name}`);
    await expect.poll(() => phone.getByText("Comprehensive eye exam with").count()).toBeGreaterThan(0);
    await expectAccessible(phone);
    await screenshot(phone, "portal-home-phone");

    // The sign-in page is hydrated, so it reached the portal in React, where asking to move a visit works too.
    const scriptsInPage = () => phone.evaluate(() => document.scripts.length);
    expect(await scriptsInPage()).toBeGreaterThan(0);
    await phone.locator("summary", { hasText: "Ask to move it" }).first().click();
    await phone.getByLabel("When would suit you instead?").first().fill("Mornings before ten");
    await phone.getByRole("button", { name: "Send request" }).first().click();
    await expect.poll(() => phone.getByTestId("toast").textContent()).toContain("Request sent to the front desk");
    await expect.poll(() => phone.getByText("You asked to move this visit: “Mornings before ten”").count()).toBe(1);

    // A fresh load of the portal is plain HTML: no script in the page, and no JavaScript fetched from
    // the app while the patient uses it.
    const scriptsLoaded: string[] = [];
    const appOrigin = new URL(baseUrl()).origin;
    phone.on("request", (r) => {
      const url = new URL(r.url());
      if (url.origin === appOrigin && (r.resourceType() === "script" || /\.m?js$/.test(url.pathname)))
        scriptsLoaded.push(url.pathname);
    });
    await phone.goto("/portal");
    await ready(phone);
    expect(await scriptsInPage()).toBe(0);
    expect(await phone.getByRole("heading", { level: 1 }).textContent()).toBe(`Hello, ${patient.first_name}`);

    // Book a visit: a time asks for a check first, and only "Book this visit" books it.
    await phone.getByRole("link", { name: "Book an eye exam" }).click();
    await phone.waitForURL("**/portal/book");
    const bookDay = new Date(Date.now() + 50 * 86_400_000);
    while (bookDay.getUTCDay() !== 2) bookDay.setUTCDate(bookDay.getUTCDate() + 1);
    await phone.getByLabel("Day").fill(bookDay.toISOString().slice(0, 10));
    await phone.getByRole("button", { name: "Show free times" }).click();
    await phone.waitForURL((u) => u.searchParams.get("date") === bookDay.toISOString().slice(0, 10));
    expect(await scriptsInPage()).toBe(0);
    const countVisits = async () =>
      (
        await q<{ n: number }>(
          "select count(*)::int as n from appointments where patient_id = $1 and status <> 'cancelled'",
          [patient.id],
        )
      )[0]!.n;
    const visitsBefore = await countVisits();
    await phone.getByRole("listitem").getByRole("button", { name: /with / }).first().click();
    await expect.poll(() => phone.getByRole("heading", { name: "Check and confirm your visit" }).count()).toBe(1);
    expect(await scriptsInPage()).toBe(0);
    expect(await countVisits()).toBe(visitsBefore);
    await expectAccessible(phone);
    await phone.getByRole("button", { name: "Book this visit" }).click();
    await expect.poll(() => phone.getByTestId("toast").textContent()).toContain("Your visit is booked");
    expect(await countVisits()).toBe(visitsBefore + 1);
    const [justBooked] = await q<{ id: string }>(
      "select id from appointments where patient_id = $1 and starts_at > now() + interval '45 days' and status <> 'cancelled'",
      [patient.id],
    );

    // Ask to move the first visit, by keyboard: the disclosure opens with Enter; a blank request is
    // refused on the same page with the reason by the field; the request shows on the front desk's day list.
    const [firstBooked] = await q<{ id: string }>(
      "select id from appointments where patient_id = $1 and starts_at > now() and status in ('booked', 'confirmed') order by starts_at limit 1",
      [patient.id],
    );
    const firstVisit = phone.locator(`#visit-${firstBooked!.id}`);
    await firstVisit.locator("summary", { hasText: "Ask to move it" }).focus();
    await phone.keyboard.press("Enter");
    await firstVisit.getByLabel("When would suit you instead?").fill("   ");
    await firstVisit.getByRole("button", { name: "Send request" }).click();
    await expect.poll(() => firstVisit.getByText("Say when would suit you instead.").count()).toBe(1);
    const refusedVisit = firstVisit;
    expect(await refusedVisit.getByLabel("When would suit you instead?").getAttribute("aria-invalid")).toBe("true");
    await expectAccessible(phone);
    await refusedVisit.getByLabel("When would suit you instead?").fill("Any Thursday afternoon");
    await refusedVisit.getByLabel("When would suit you instead?").press("Tab");
    await phone.keyboard.press("Enter");
    await expect.poll(() => phone.getByTestId("toast").textContent()).toContain("Request sent to the front desk");
    expect(await scriptsInPage()).toBe(0);
    await desk.goto("/schedule/day");
    await expect
      .poll(() => desk.getByRole("region", { name: /Patients asking to move a visit/ }).textContent())
      .toContain("Any Thursday afternoon");
    await expectAccessible(desk);

    // Cancel the visit just booked: the page asks first, and nothing changes until the patient confirms.
    const bookedVisit = phone.locator(`#visit-${justBooked!.id}`);
    await bookedVisit.getByRole("link", { name: "Cancel visit" }).click();
    await phone.waitForURL((u) => u.searchParams.get("cancel") === justBooked!.id);
    await expect.poll(() => bookedVisit.getByRole("heading", { name: "Cancel this visit?" }).count()).toBe(1);
    expect(await countVisits()).toBe(visitsBefore + 1);
    await expectAccessible(phone);
    await bookedVisit.getByRole("button", { name: "Yes, cancel it" }).click();
    await expect.poll(() => phone.getByTestId("toast").textContent()).toContain("Your visit is cancelled");
    expect(await countVisits()).toBe(visitsBefore);

    // Pay the open invoice on the stand-in's checkout page.
    await phone.getByRole("link", { name: "Invoices and payments" }).click();
    await phone.waitForURL("**/portal/invoices");
    await ready(phone);
    await expectAccessible(phone);
    await screenshot(phone, "portal-invoices-phone");
    await phone
      .getByRole("button", { name: /^Pay £.* now$/ })
      .first()
      .click();
    await phone.waitForURL("**/pay/**");
    await ready(phone);
    expect(await scriptsInPage()).toBe(0);
    await expectAccessible(phone);
    await phone.getByRole("button", { name: /^Pay £.* by card$/ }).click();
    await phone.waitForURL((u) => u.port === String(inject("stripePort")) && u.pathname.startsWith("/checkout/"));
    await phone.getByLabel("Card number").fill("4242 4242 4242 4242");
    await phone.getByRole("button", { name: /^Pay £/ }).click();
    await phone.waitForURL((u) => u.pathname.startsWith("/pay/") && u.searchParams.get("checkout") === "done");
    // Until the payment service's webhook arrives, the page reloads itself (no script).
    await expect
      .poll(() => phone.getByRole("status").filter({ hasText: "Paid — thank you" }).count(), { timeout: 15_000 })
      .toBe(1);
    expect(await scriptsInPage()).toBe(0);
    await phone.goto("/portal/invoices");
    await expect.poll(() => phone.getByText("Paid", { exact: true }).count()).toBeGreaterThan(0);
    await expect.poll(() => phone.getByRole("link", { name: "Receipt (PDF)" }).count()).toBeGreaterThan(0);

    // The prescription, as the same PDF the practice prints.
    await phone.goto("/portal/prescriptions");
    await ready(phone);
    await expectAccessible(phone);
    await screenshot(phone, "portal-prescriptions-phone");
    const href = await phone
      .getByRole("link", { name: "Download the prescription (PDF)" })
      .first()
      .getAttribute("href");
    const pdf = await phone.request.get(href!);
    expect(pdf.headers()["content-type"]).toBe("application/pdf");
    const dir = mkdtempSync(join(tmpdir(), "dioptra-rx-"));
    writeFileSync(join(dir, "rx.pdf"), await pdf.body());
    const text = execFileSync("pdftotext", ["-layout", join(dir, "rx.pdf"), "-"]).toString();
    expect(text).toContain(`${patient.first_name} ${patient.last_name}`);
    expect(text).toContain("Spectacle prescription");

    // Reminders off.
    await phone.goto("/portal/reminders");
    await ready(phone);
    await expectAccessible(phone);
    await phone.getByLabel("Appointment e-mails").uncheck();
    await phone.getByRole("button", { name: "Save my choices" }).click();
    await expect.poll(() => phone.getByTestId("toast").textContent()).toContain("Your reminder choices are saved");
    expect(await phone.getByLabel("Appointment e-mails").isChecked()).toBe(false);
    await screenshot(phone, "portal-reminders-phone");
    expect(await scriptsInPage()).toBe(0);
    expect(scriptsLoaded).toEqual([]);

    // A later booking's confirmation and reminder jobs send this patient nothing.
    const optom = await q<{ id: string }>("select id from users where email = $1", [DEMO.optometrist]);
    const [type] = await q<{ id: string }>("select id from appointment_types where name = 'Comprehensive eye exam'");
    const day = new Date(Date.now() + 42 * 86_400_000);
    while (day.getUTCDay() === 0 || day.getUTCDay() === 6) day.setUTCDate(day.getUTCDate() + 1);
    const start = new Date(Date.UTC(day.getUTCFullYear(), day.getUTCMonth(), day.getUTCDate(), 15, 0));
    const booked = await desk.request.post("/api/appointments", {
      data: {
        patientId: patient.id,
        providerId: optom[0]!.id,
        appointmentTypeId: type!.id,
        start: start.toISOString(),
      },
    });
    expect(booked.status()).toBe(201);
    const appointmentId = ((await booked.json()) as { appointment: { id: string } }).appointment.id;
    await expect
      .poll(
        async () =>
          (
            await q<{ status: string }>(
              "select status from appointment_messages where appointment_id = $1 and kind = 'confirmation'",
              [appointmentId],
            )
          ).map((r) => r.status),
        { timeout: 20_000 },
      )
      .toEqual(["skipped"]);
    const sent = await mailTo(patient.email);
    expect(sent.filter((m) => /confirm/i.test(m.subject))).toHaveLength(0);
  }, 180_000);

  it("lets a patient ask for a sign-in link instead of a password", async () => {
    const phone = await browser.newPage({ viewport: PHONE });
    await phone.goto("/login");
    await ready(phone);
    await phone.getByRole("link", { name: "Patients: e-mail me a sign-in link" }).click();
    await phone.waitForURL("**/sign-in-link");
    await ready(phone);
    await expectAccessible(phone);
    await phone.getByLabel("E-mail").fill(DEMO.patient);
    await phone.getByRole("button", { name: "Send sign-in link" }).click();
    await expect.poll(() => phone.getByRole("status").first().textContent()).toContain("a sign-in link is on its way");
    await expect
      .poll(async () => (await mailTo(DEMO.patient)).some((m) => m.subject === "Your sign-in link"))
      .toBe(true);
    const mail = (await mailTo(DEMO.patient)).find((m) => m.subject === "Your sign-in link")!;
    await phone.goto(mail.text.match(/https?:\/\/\S+\/sign-in-link\/verify\?token=\S+/)![0]);
    await ready(phone);
    await phone.getByRole("button", { name: "Continue to my page" }).click();
    await phone.waitForURL("**/portal");
    await expectAccessible(phone);
    const other = await phone.goto("/billing");
    expect(other?.status()).toBe(403);
  });
});
