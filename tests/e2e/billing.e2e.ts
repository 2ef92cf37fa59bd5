import pg from "pg";
import type { Page } from "playwright-core";
import { afterAll, beforeAll, describe, expect, inject, it } from "vitest";
import { baseUrl, DEMO, expectAccessible, mailTo, screenshot, signIn, useBrowser } from "./fixtures";

const browser = useBrowser();
/** Waits until the page's scripts have loaded (hydrated), so typing is not undone and clicks are handled by the app. */
const ready = (page: Page) => page.waitForLoadState("networkidle");
/** Actions that render a PDF or send mail can take a few seconds on a loaded machine. */
const SLOW = { timeout: 15_000 };
let client: pg.Client;
let examId: string;

/** A finished visit of the demo patient: a completed appointment of a type whose fee is EXAM-A, and its signed exam. */
beforeAll(async () => {
  client = new pg.Client({ connectionString: inject("e2eDatabaseUrl") });
  await client.connect();
  const q = async <T extends pg.QueryResultRow>(text: string, values: unknown[] = []) =>
    (await client.query<T>(text, values)).rows;
  const [fee] = await q<{ id: string }>("select id from fee_items where code = 'EXAM-A'");
  const [optom] = await q<{ id: string }>("select id from users where email = $1", [DEMO.optometrist]);
  const [patient] = await q<{ id: string }>("select patient_id as id from users where email = $1", [DEMO.patient]);
  const [type] = await q<{ id: string }>(
    "insert into appointment_types (name, duration_minutes, default_fee_item_id) values ('Routine eye exam (billing test)', 30, $1) returning id",
    [fee!.id],
  );
  const start = new Date(Date.UTC(2026, 10, 3, 9, 0));
  const [appt] = await q<{ id: string }>(
    "insert into appointments (patient_id, provider_id, appointment_type_id, starts_at, ends_at, status) values ($1, $2, $3, $4, $5, 'completed') returning id",
    [patient!.id, optom!.id, type!.id, start, new Date(start.getTime() + 30 * 60_000)],
  );
  const [exam] = await q<{ id: string }>(
    "insert into exams (patient_id, optometrist_id, appointment_id, status, signed_at, signed_by_id, examined_at) values ($1, $2, $3, 'signed', now(), $2, $4) returning id",
    [patient!.id, optom!.id, appt!.id, start],
  );
  examId = exam!.id;
});
afterAll(async () => {
  await client?.end();
});

describe("billing in the browser", () => {
  it("raises an invoice from a finished exam, e-mails it; the patient pays by card on the checkout page and gets a receipt; takings show it", async () => {
    const desk = await browser.newPage();
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL((u) => u.pathname === "/");
    await desk.getByRole("navigation", { name: "Main" }).getByRole("link", { name: "Billing" }).click();
    await desk.waitForURL("**/billing");
    await expectAccessible(desk);

    await desk.goto(`/billing/invoices/new?exam=${examId}`);
    await ready(desk);
    await expect.poll(() => desk.getByRole("heading", { level: 1 }).textContent()).toBe("New invoice");
    // The exam's visit fee is already on; the receptionist adds a dispensed item.
    expect(await desk.getByLabel("Quantity of Eye examination, adult").inputValue()).toBe("1");
    await desk.getByLabel("Quantity of Contact lens solution, 360 ml").fill("2");
    await expectAccessible(desk);
    await screenshot(desk, "billing-new-from-exam");
    await desk.getByRole("button", { name: "Create draft invoice" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("Draft invoice created");
    // £65.00 exempt + 2 × £8.99 at 20 % (£3.60 tax, rounded per line) = £86.58
    await expect.poll(() => desk.getByTestId("amount-due").textContent()).toBe("£86.58");
    await expectAccessible(desk);
    await desk.getByRole("button", { name: "Issue invoice" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toMatch(/Issued as INV-\d{6}/);
    const label = (await desk.getByRole("heading", { level: 1 }).textContent())!.match(/INV-\d{6}/)![0];
    await desk.getByRole("button", { name: "E-mail invoice with payment link" }).click();
    await expect
      .poll(() => desk.getByTestId("toast").textContent(), SLOW)
      .toContain(`Invoice e-mailed to ${DEMO.patient}`);
    await expectAccessible(desk);
    await screenshot(desk, "billing-invoice-open");

    // The patient, not signed in, opens the link from the e-mail in the mailbox page.
    const patient = await browser.newPage();
    await patient.goto("/dev/mailbox");
    await patient
      .getByRole("link", { name: new RegExp(`Invoice ${label} from Larkspur Lane Eye Care`) })
      .first()
      .click();
    await patient.getByRole("link", { name: /\/pay\// }).click();
    await patient.waitForURL("**/pay/**");
    await ready(patient);
    await expect.poll(() => patient.getByRole("heading", { level: 1 }).textContent()).toContain(`Invoice ${label}`);
    await expectAccessible(patient);
    await screenshot(patient, "pay-link-page");
    await patient.getByRole("button", { name: "Pay £86.58 by card" }).click();

    // The stand-in's hosted checkout page.
    await patient.waitForURL((u) => u.port === String(inject("stripePort")) && u.pathname.startsWith("/checkout/"));
    await expect.poll(() => patient.getByRole("heading", { level: 1 }).textContent()).toContain("Pay invoice");
    await expectAccessible(patient);
    await patient.getByLabel("Card number").fill("4242 4242 4242 4242");
    await screenshot(patient, "standin-checkout");
    await patient.getByRole("button", { name: /^Pay £86.58/ }).click();
    await patient.waitForURL((u) => u.pathname.startsWith("/pay/") && u.searchParams.get("checkout") === "done");
    await expect
      .poll(() => patient.getByRole("status").filter({ hasText: "Paid — thank you" }).count(), { timeout: 15_000 })
      .toBe(1);
    expect(await patient.getByTestId("amount-due").textContent()).toBe("£0.00");
    await expectAccessible(patient);
    await screenshot(patient, "pay-link-paid");

    // The receipt is in the mailbox page.
    await expect
      .poll(
        async () => (await mailTo(DEMO.patient)).some((m) => m.subject.startsWith("Receipt for your payment")),
        SLOW,
      )
      .toBe(true);
    await patient.goto("/dev/mailbox");
    await patient
      .getByRole("link", { name: /Receipt for your payment to Larkspur Lane Eye Care/ })
      .first()
      .click();
    await expect.poll(() => patient.getByRole("link", { name: /^receipt-INV-\d{6}\.pdf$/ }).count()).toBe(1);
    expect(await patient.locator("pre").textContent()).toContain(
      `We have received £86.58 (card online) for invoice ${label}`,
    );

    // The takings page shows it under card online, and it reconciles.
    await desk.goto("/billing/takings");
    await expect.poll(() => desk.getByRole("link", { name: label }).count()).toBeGreaterThan(0);
    const row = desk.getByTestId("takings-by-method").getByRole("row", { name: /Card online/ });
    expect(await row.textContent()).toContain("£86.58");
    expect(await desk.getByRole("status").filter({ hasText: "Reconciles with the invoices" }).count()).toBe(1);
    await expectAccessible(desk);
    await screenshot(desk, "billing-takings");
    await desk.goto("/billing?status=paid");
    await expect.poll(() => desk.getByRole("row", { name: new RegExp(label) }).textContent()).toContain("Paid");
    await expectAccessible(desk);
    await screenshot(desk, "billing-list");
  });

  it("leaves the invoice open with a clear message when the card is declined", async () => {
    const desk = await browser.newPage();
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL((u) => u.pathname === "/");
    await desk.goto("/billing/invoices/new");
    await ready(desk);
    // The patient field searches the whole register as you type.
    await desk.getByRole("combobox", { name: "Patient" }).fill("Achterberg Rosalind");
    await desk
      .getByRole("option", { name: new RegExp(`^${"Achterberg, Rosalind"}`) })
      .first()
      .click();
    await expect.poll(() => desk.getByTestId("chosen-patient").textContent()).toContain("Achterberg, Rosalind");
    await desk.getByLabel("Quantity of Contact lens aftercare check").fill("1");
    await desk.getByRole("button", { name: "Create draft invoice" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("Draft invoice created");
    await desk.getByRole("button", { name: "Issue invoice" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toMatch(/Issued as/);
    const label = (await desk.getByRole("heading", { level: 1 }).textContent())!.match(/INV-\d{6}/)![0];
    await desk.getByRole("button", { name: "E-mail invoice with payment link" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("Invoice e-mailed");

    const mail = (await mailTo(DEMO.patient)).find((m) => m.subject.startsWith(`Invoice ${label}`))!;
    const link = mail.text.match(/https?:\/\/\S+\/pay\/\S+/)![0];
    const patient = await browser.newPage();
    await patient.goto(link);
    await ready(patient);
    await patient.getByRole("button", { name: "Pay £30.00 by card" }).click();
    await patient.waitForURL((u) => u.pathname.startsWith("/checkout/"));
    await patient.getByLabel("Card number").fill("4000 0000 0000 0002");
    await patient.getByRole("button", { name: /^Pay £30.00/ }).click();
    await expect.poll(() => patient.getByRole("alert").textContent(), SLOW).toContain("Your card was declined.");
    await expectAccessible(patient);
    await screenshot(patient, "standin-declined");
    await patient.getByRole("link", { name: "Cancel and return to the practice" }).click();
    await patient.waitForURL((u) => u.pathname.startsWith("/pay/") && u.searchParams.get("checkout") === "cancelled");
    await ready(patient);
    await expect.poll(() => patient.getByRole("alert").textContent()).toContain("Your card was declined.");
    expect(await patient.getByRole("alert").textContent()).toContain("The invoice is still open");
    expect(await patient.getByTestId("amount-due").textContent()).toBe("£30.00");
    expect(await patient.getByRole("heading", { level: 1 }).textContent()).toContain("Open");
    await expectAccessible(patient);
    await screenshot(patient, "pay-link-declined");

    await desk.reload();
    await ready(desk);
    await expect.poll(() => desk.getByText("Your card was declined.").count()).toBe(1);
    expect(await desk.getByTestId("amount-due").textContent()).toBe("£30.00");

    // Another card, with the stand-in's webhook held back 3 seconds: the page waits for it.
    await patient.getByRole("button", { name: "Pay £30.00 by card" }).click();
    await patient.waitForURL((u) => u.pathname.startsWith("/checkout/"));
    await patient.getByLabel("Card number").fill("4242 4242 4242 4242");
    await patient.getByText("Webhook delivery (stand-in options)").click();
    await patient.getByLabel("Delay a delivery by 3 seconds").check();
    await patient.getByRole("button", { name: /^Pay £30.00/ }).click();
    await patient.waitForURL((u) => u.pathname.startsWith("/pay/") && u.searchParams.get("checkout") === "done");
    await expect.poll(() => patient.getByRole("status").filter({ hasText: "Confirming your payment" }).count()).toBe(1);
    expect(await patient.getByRole("heading", { level: 1 }).textContent()).toContain("Open");
    await expect
      .poll(() => patient.getByRole("status").filter({ hasText: "Paid — thank you" }).count(), { timeout: 15_000 })
      .toBe(1);
  });

  it("lets the owner keep the fee schedule, with errors next to the field", async () => {
    const owner = await browser.newPage();
    await signIn(owner, DEMO.owner);
    await owner.waitForURL((u) => u.pathname === "/");
    await owner.goto("/settings/fees");
    await ready(owner);
    await expectAccessible(owner);
    await owner.getByLabel("Code").fill("BV-ASSESS");
    await owner.getByLabel("Price (GBP, before tax)").fill("45.999");
    await owner.getByLabel("Description").fill("Binocular vision assessment");
    await owner.getByRole("button", { name: "Add fee" }).click();
    await expect.poll(() => owner.getByText(/no more than two decimals/).count()).toBe(1);
    await owner.getByLabel("Price (GBP, before tax)").fill("45.00");
    await owner.getByRole("button", { name: "Add fee" }).click();
    await expect.poll(() => owner.getByTestId("toast").textContent(), SLOW).toContain("BV-ASSESS saved");
    expect(await owner.getByRole("row", { name: /BV-ASSESS/ }).textContent()).toContain("£45.00");
    await expectAccessible(owner);
    await screenshot(owner, "settings-fees");
  });

  it("fits a tablet held upright without sideways scrolling", async () => {
    const tablet = await browser.newPage({ viewport: { width: 810, height: 1080 } });
    await signIn(tablet, DEMO.receptionist);
    await tablet.waitForURL((u) => u.pathname === "/");
    for (const path of ["/billing", "/billing/takings", "/billing/invoices/new"]) {
      await tablet.goto(path);
      await ready(tablet);
      expect(await tablet.evaluate(() => document.documentElement.scrollWidth <= window.innerWidth)).toBe(true);
    }
    await tablet.goto("/billing");
    await tablet
      .getByRole("link", { name: /^INV-\d{6}$/ })
      .first()
      .click();
    await tablet.waitForURL("**/billing/invoices/**");
    await ready(tablet);
    expect(await tablet.evaluate(() => document.documentElement.scrollWidth <= window.innerWidth)).toBe(true);
    await screenshot(tablet, "billing-invoice-tablet");
  });
});

describe("the webhook endpoint over HTTP", () => {
  const standIn = () => `http://127.0.0.1:${inject("stripePort")}`;

  it("refuses an unsigned or forged event with 400", async () => {
    const body = JSON.stringify({
      id: "evt_forged",
      type: "checkout.session.completed",
      created: Math.floor(Date.now() / 1000),
      data: { object: {} },
    });
    const unsigned = await fetch(`${baseUrl()}/api/webhooks/stripe`, {
      method: "POST",
      headers: { "content-type": "application/json" },
      body,
    });
    expect(unsigned.status).toBe(400);
    const forged = await fetch(`${baseUrl()}/api/webhooks/stripe`, {
      method: "POST",
      headers: {
        "content-type": "application/json",
        "stripe-signature": `t=${Math.floor(Date.now() / 1000)},v1=${"0".repeat(64)}`,
      },
      body,
    });
    expect(forged.status).toBe(400);
    expect(((await forged.json()) as { error: string }).error).toMatch(/Webhook refused/);
    expect((await client.query("select 1 from stripe_events where id = 'evt_forged'")).rowCount).toBe(0);
  });

  it("answers the stand-in's replay of a delivered payment event as a duplicate, changing nothing", async () => {
    const events = (await (await fetch(`${standIn()}/_standin/events`)).json()) as {
      id: string;
      type: string;
      deliveries: { status: number }[];
    }[];
    const completed = events.find(
      (e) => e.type === "checkout.session.completed" && e.deliveries.some((d) => d.status === 200),
    );
    expect(completed).toBeTruthy();
    const before = await client.query(
      "select sum(paid_minor)::int as paid, (select count(*)::int from payments where status = 'succeeded') as n from invoices",
    );
    const replay = (await (
      await fetch(`${standIn()}/_standin/events/${completed!.id}/deliver`, { method: "POST" })
    ).json()) as { deliveries: { status: number }[] };
    expect(replay.deliveries.at(-1)!.status).toBe(200);
    const after = await client.query(
      "select sum(paid_minor)::int as paid, (select count(*)::int from payments where status = 'succeeded') as n from invoices",
    );
    expect(after.rows[0]).toEqual(before.rows[0]);
    const [row] = (await client.query("select outcome from stripe_events where id = $1", [completed!.id])).rows;
    expect(row.outcome).toBe("payment succeeded");
  });
});
