import pg from "pg";
import type { Page } from "playwright-core";
import { afterAll, beforeAll, describe, expect, inject, it } from "vitest";
import { DEMO, expectAccessible, mailTo, signIn, useBrowser } from "./fixtures";

const browser = useBrowser();
const ready = (page: Page) => page.waitForLoadState("networkidle");
const SLOW = { timeout: 20_000 };
let client: pg.Client;
const q = async <T extends pg.QueryResultRow>(text: string, values: unknown[] = []) =>
  (await client.query<T>(text, values)).rows;
const tag = Math.random().toString(36).slice(2, 7);
const SURNAME = `Harrowgate${tag}`;

beforeAll(async () => {
  client = new pg.Client({ connectionString: inject("e2eDatabaseUrl") });
  await client.connect();
  // 600 patients sorting before everyone else, so a fixed list of the first 500 would miss the rest;
  // 24 whose first name contains the searched word, and one whose surname is it exactly.
  await q(
    `insert into patients (first_name, last_name, date_of_birth) select 'Filler', 'Aaaa' || lpad(g::text, 4, '0') || $1, date '1960-01-01' from generate_series(1, 600) g`,
    [tag],
  );
  await q(
    `insert into patients (first_name, last_name, date_of_birth) select $1 || 'a', 'Abbot' || lpad(g::text, 2, '0') || $2, date '1971-01-01' from generate_series(1, 24) g`,
    [SURNAME, tag],
  );
  await q(
    `insert into patients (first_name, last_name, date_of_birth, email) values ('Zebedee', $1, date '1990-09-09', $2)`,
    [SURNAME, `zebedee.${tag}@dioptra-demo.test`],
  );
});
afterAll(async () => {
  await client?.end();
});

describe("finding people and billing at the front desk", () => {
  it("search says how many match, ranks the exact surname first and loads the rest; the new-invoice form finds a patient past the first 500", async () => {
    const desk = await browser.newPage();
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL((u) => u.pathname === "/");
    await desk.goto("/patients");
    await ready(desk);
    const box = desk.getByRole("combobox", { name: "Find a patient" });
    await box.fill(SURNAME.toLowerCase());
    await expect
      .poll(() => desk.getByTestId("patient-search-count").first().textContent(), SLOW)
      .toBe("25 patients match · 20 shown");
    const matches = desk.getByRole("listbox", { name: "Matching patients" }).getByRole("option");
    expect(await matches.first().textContent()).toContain(`${SURNAME}, Zebedee`);
    await expectAccessible(desk);
    // The last option loads the next results; by keyboard: down to it, Enter.
    for (let i = 0; i < 21; i++) await box.press("ArrowDown");
    await box.press("Enter");
    await expect.poll(() => matches.count(), SLOW).toBe(25);

    await desk.goto("/billing/invoices/new");
    await ready(desk);
    await desk.getByRole("combobox", { name: "Patient" }).fill(`Zebedee ${SURNAME}`);
    await expect
      .poll(() => desk.getByRole("listbox", { name: "Matching patients" }).getByRole("option").count(), SLOW)
      .toBe(1);
    await desk.getByRole("combobox", { name: "Patient" }).press("Enter");
    await expect.poll(() => desk.getByTestId("chosen-patient").textContent()).toContain(`${SURNAME}, Zebedee`);
    await expectAccessible(desk);
    await desk.getByLabel("Quantity of Eye examination, adult").fill("1");
    await desk.getByRole("button", { name: "Create draft invoice" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("Draft invoice created");
    expect(await desk.getByRole("heading", { level: 1 }).textContent()).toBeTruthy();
  }, 120_000);

  it("quick registration in the booking form warns of a likely duplicate and offers the existing patient", async () => {
    const desk = await browser.newPage();
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL((u) => u.pathname === "/");
    await desk.goto("/schedule/book");
    await ready(desk);
    await desk.getByText("Register a new patient").click();
    const quick = desk.locator("details", { hasText: "Register a new patient" });
    await quick.getByLabel("First name").fill("zebedee");
    await quick.getByLabel("Last name").fill(SURNAME);
    await quick.getByLabel("Date of birth").fill("1990-09-09");
    await desk.getByRole("button", { name: "Register and choose" }).click();
    await expect.poll(() => desk.getByText("This may be a patient who is already registered").count(), SLOW).toBe(1);
    await expectAccessible(desk);
    await desk.getByRole("button", { name: `Choose Zebedee ${SURNAME}` }).click();
    await expect.poll(() => desk.getByTestId("chosen-patient").textContent()).toContain(`${SURNAME}, Zebedee`);
    expect((await q("select count(*)::int as n from patients where last_name = $1", [SURNAME]))[0]!.n).toBe(1);
  }, 90_000);

  it("raises an invoice from an appointment with its type's fee, shows the balance on the chart and in the balances list, resets the payment form and asks before a repeat payment", async () => {
    const [patient] = await q<{ id: string }>("select id from patients where last_name = $1", [SURNAME]);
    const [optom] = await q<{ id: string }>("select id from users where email = $1", [DEMO.optometrist]);
    const [type] = await q<{ id: string }>("select id from appointment_types where name = 'Contact lens check'");
    // A late evening on a random past day: outside the hours, so clear of the demo's visits.
    const start = new Date(Date.UTC(2026, 5, 2, 21, 30) + Math.floor(Math.random() * 150) * 86_400_000);
    const [appt] = await q<{ id: string }>(
      "insert into appointments (patient_id, provider_id, appointment_type_id, starts_at, ends_at, status) values ($1, $2, $3, $4, $5, 'completed') returning id",
      [patient!.id, optom!.id, type!.id, start, new Date(start.getTime() + 20 * 60_000)],
    );
    const desk = await browser.newPage();
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL((u) => u.pathname === "/");
    await desk.goto(`/schedule/appointments/${appt!.id}`);
    await ready(desk);
    await desk.getByRole("link", { name: "Raise invoice" }).click();
    await desk.waitForURL((u) => u.pathname === "/billing/invoices/new");
    await ready(desk);
    expect(await desk.getByTestId("chosen-patient").textContent()).toContain(`${SURNAME}, Zebedee`);
    const feeRow = desk.locator("tr", { hasText: "this appointment's fee" });
    expect(await feeRow.locator("input").inputValue()).toBe("1");
    await expectAccessible(desk);
    await desk.getByRole("button", { name: "Create draft invoice" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("Draft invoice created");
    await desk.getByRole("button", { name: "Issue invoice" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toMatch(/Issued as INV-\d{6}/);
    await ready(desk);
    const invoiceUrl = desk.url();

    // A part payment: afterwards the form is empty again (the amount shows what is now due).
    const due = Number(await desk.getByLabel(/^Amount \(/).inputValue());
    await desk.getByLabel(/^Amount \(/).fill("5");
    await desk.getByLabel("Terminal or receipt reference (optional)").fill("R-77");
    await desk.getByRole("button", { name: "Record payment" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("£5.00 recorded");
    await expect.poll(() => desk.getByLabel("Terminal or receipt reference (optional)").inputValue()).toBe("");
    await expect.poll(() => desk.getByLabel(/^Amount \(/).inputValue()).toBe((due - 5).toFixed(2));
    // The same again within two minutes is refused until confirmed.
    await desk.getByLabel(/^Amount \(/).fill("5");
    await desk.getByLabel("Terminal or receipt reference (optional)").fill("R-77");
    await desk.getByRole("button", { name: "Record payment" }).click();
    await expect.poll(() => desk.getByText("This looks like the same payment again").count(), SLOW).toBe(1);
    await expectAccessible(desk);
    expect(await desk.getByLabel("Terminal or receipt reference (optional)").inputValue()).toBe("R-77");
    await desk.getByLabel("This is a second payment: record it too").check();
    await desk.getByRole("button", { name: "Record payment" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("£5.00 recorded");
    await expect
      .poll(
        async () =>
          (
            await q(
              "select count(*)::int as n from payments p join invoices i on i.id = p.invoice_id where i.patient_id = $1",
              [patient!.id],
            )
          )[0]!.n,
        SLOW,
      )
      .toBe(2);

    await desk.goto(`/patients/${patient!.id}`);
    await ready(desk);
    const owed = (due - 10).toFixed(2);
    expect(await desk.getByTestId("patient-balance").textContent()).toContain(`£${owed} owed on 1 invoice`);
    await expectAccessible(desk);
    await desk.getByRole("link", { name: "Outstanding balances" }).click();
    await desk.waitForURL((u) => u.pathname === "/billing/balances");
    await ready(desk);
    expect(await desk.getByRole("row", { name: new RegExp(`${SURNAME}, Zebedee`) }).textContent()).toContain(
      `£${owed}`,
    );
    await expectAccessible(desk);
    expect(invoiceUrl).toContain("/billing/invoices/");
  }, 150_000);

  it("the invite form is empty again after an invitation is sent", async () => {
    const owner = await browser.newPage();
    await signIn(owner, DEMO.owner);
    await owner.waitForURL((u) => u.pathname === "/");
    await owner.goto("/settings/users");
    await ready(owner);
    await owner.getByLabel("Name", { exact: true }).fill("Perpetua Lindqvist");
    await owner.getByLabel("E-mail", { exact: true }).fill(`perpetua.${tag}@dioptra-demo.test`);
    await owner.getByLabel("Role", { exact: true }).selectOption("receptionist");
    await owner.getByRole("button", { name: "Send invitation" }).click();
    await expect.poll(() => owner.getByTestId("toast").textContent(), SLOW).toContain("Invitation sent to");
    await expect.poll(() => owner.getByLabel("E-mail", { exact: true }).inputValue()).toBe("");
    expect(await owner.getByLabel("Name", { exact: true }).inputValue()).toBe("");
    await expectAccessible(owner);
  }, 90_000);

  it("recalls: due this month, a send bar that stays in reach, sent rows stay with their state, and the e-mail's reply reaches the practice", async () => {
    // A patient whose two-yearly recall falls due this month.
    const now = new Date();
    const lastVisit = new Date(Date.UTC(now.getUTCFullYear() - 2, now.getUTCMonth(), 15, 9, 0));
    const email = `recall.${tag}@dioptra-demo.test`;
    const [p] = await q<{ id: string }>(
      "insert into patients (first_name, last_name, date_of_birth, email) values ('Rowena', $1, date '1970-02-02', $2) returning id",
      [`Recallby${tag}`, email],
    );
    const [optom] = await q<{ id: string }>("select id from users where email = $1", [DEMO.optometrist]);
    const [type] = await q<{ id: string }>("select id from appointment_types where name = 'Comprehensive eye exam'");
    await q(
      "insert into appointments (patient_id, provider_id, appointment_type_id, starts_at, ends_at, status) values ($1, $2, $3, $4, $5, 'completed')",
      [p!.id, optom!.id, type!.id, lastVisit, new Date(lastVisit.getTime() + 30 * 60_000)],
    );
    const desk = await browser.newPage({ viewport: { width: 1200, height: 700 } });
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL((u) => u.pathname === "/");
    await desk.goto("/schedule/recalls");
    await ready(desk);
    await desk.getByRole("link", { name: "Due this month" }).click();
    await desk.waitForURL((u) => u.searchParams.has("dueFrom"));
    await ready(desk);
    const month = `${now.getUTCFullYear()}-${String(now.getUTCMonth() + 1).padStart(2, "0")}`;
    await expect.poll(() => desk.getByLabel("Due from (optional)").inputValue()).toBe(`${month}-01`);
    expect(await desk.getByTestId("recall-send-bar").evaluate((el) => getComputedStyle(el).position)).toBe("sticky");
    await desk.getByLabel(`Choose Rowena Recallby${tag}`).check();
    await expectAccessible(desk);
    await desk.getByRole("button", { name: "Send recall e-mails (1)" }).click();
    await expect
      .poll(() => desk.getByTestId("recall-progress").textContent(), SLOW)
      .toMatch(/1 of 1 done.*1 sent.*finished/);
    await desk.waitForURL((u) => u.searchParams.has("batch"));
    await expect
      .poll(() => desk.getByRole("row", { name: new RegExp(`Rowena Recallby${tag}`) }).textContent(), SLOW)
      .toContain("Recall sent");
    await expectAccessible(desk);
    await expect.poll(async () => (await mailTo(email)).length, SLOW).toBe(1);
    const [mail] = await mailTo(email);
    expect(mail!.text).toContain("reply to this e-mail (it reaches desk@dioptra-demo.test)");
  }, 120_000);

  it("portal: choosing a time asks for a check before booking; invoices carry the practice's numbers; the pay page leads back", async () => {
    const [patientRow] = await q<{ id: string }>("select patient_id as id from users where email = $1", [DEMO.patient]);
    const phone = await browser.newPage({ viewport: { width: 390, height: 844 } });
    await signIn(phone, DEMO.patient);
    await phone.waitForURL((u) => u.pathname.startsWith("/portal"));
    const day = new Date(Date.now() + 9 * 86_400_000);
    while (day.getUTCDay() !== 3) day.setUTCDate(day.getUTCDate() + 1);
    await phone.goto(`/portal/book?date=${day.toISOString().slice(0, 10)}`);
    await ready(phone);
    const before = (await q("select count(*)::int as n from appointments where patient_id = $1", [patientRow!.id]))[0]!
      .n;
    await phone
      .locator('form[method="post"]:has(input[name="step"][value="review"]) button[type="submit"]')
      .first()
      .click();
    await expect.poll(() => phone.getByRole("heading", { name: "Check and confirm your visit" }).count(), SLOW).toBe(1);
    expect((await q("select count(*)::int as n from appointments where patient_id = $1", [patientRow!.id]))[0]!.n).toBe(
      before,
    );
    await expectAccessible(phone);
    await phone.getByRole("button", { name: "Book this visit" }).click();
    await expect.poll(() => phone.getByTestId("toast").textContent(), SLOW).toContain("Your visit is booked");
    expect((await q("select count(*)::int as n from appointments where patient_id = $1", [patientRow!.id]))[0]!.n).toBe(
      before + 1,
    );

    // An issued invoice of this patient, raised at the desk.
    const desk = await browser.newPage();
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL((u) => u.pathname === "/");
    await desk.goto(`/billing/invoices/new?patient=${patientRow!.id}`);
    await ready(desk);
    await desk.getByLabel("Quantity of Eye examination, adult").fill("1");
    await desk.getByRole("button", { name: "Create draft invoice" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("Draft invoice created");
    await desk.getByRole("button", { name: "Issue invoice" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toMatch(/Issued as INV-\d{6}/);
    const label = (await desk.getByTestId("toast").textContent())!.match(/INV-\d{6}/)![0];

    await phone.goto("/portal/invoices");
    await ready(phone);
    expect(await phone.getByRole("heading", { name: `Invoice ${label}` }).count()).toBe(1);
    await expectAccessible(phone);
    await phone
      .locator("li", { has: phone.getByRole("heading", { name: `Invoice ${label}` }) })
      .getByRole("button", { name: /Pay/ })
      .click();
    await phone.waitForURL((u) => u.pathname.startsWith("/pay/"));
    await ready(phone);
    await phone.getByRole("link", { name: "Back to the patient portal" }).click();
    await phone.waitForURL((u) => u.pathname === "/portal");
    await expectAccessible(phone);
  }, 150_000);
});
