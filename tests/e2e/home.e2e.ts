import pg from "pg";
import type { Page } from "playwright-core";
import { afterAll, beforeAll, describe, expect, inject, it } from "vitest";
import { DEMO, expectAccessible, signIn, useBrowser } from "./fixtures";
import { homeScenario, type HomeScenario } from "#tests/support/home-scenario";

const browser = useBrowser();
const ready = (page: Page) => page.waitForLoadState("networkidle");
const SLOW = { timeout: 20_000 };
let client: pg.Client;
let s: HomeScenario;
const tag = Math.random().toString(36).slice(2, 7);
const LATE = `Zzyzx${tag}`;

beforeAll(async () => {
  client = new pg.Client({ connectionString: inject("e2eDatabaseUrl") });
  await client.connect();
  s = await homeScenario(async (text, values) => (await client.query(text, values)).rows);
  // 600 patients sorting first, then one sorting after every other: a fixed list of 500 would miss them.
  await client.query(
    `insert into patients (first_name, last_name, date_of_birth) select 'Filler', 'Aaab' || lpad(g::text, 4, '0') || $1, date '1961-02-03' from generate_series(1, 600) g`,
    [tag],
  );
  await client.query(
    `insert into patients (first_name, last_name, date_of_birth, email) values ('Yvette', $1, '1977-07-07', $2)`,
    [LATE, `yvette.${tag}@dioptra-demo.test`],
  );
}, 60_000);
afterAll(async () => {
  await client?.end();
});

/** Follows a link by keyboard: focus it and press Enter, then waits for the page it leads to. */
async function follow(page: Page, link: ReturnType<Page["getByRole"]>, path: string | RegExp) {
  await link.focus();
  await link.press("Enter");
  await page.waitForURL((u) =>
    typeof path === "string" ? u.pathname + u.search === path : path.test(u.pathname + u.search),
  );
  await ready(page);
}

describe("home pages per role", () => {
  it("the front desk's home shows who waits, who is to come, money due, move requests, orders ready and failed e-mails, each linked", async () => {
    const desk = await browser.newPage();
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL((u) => u.pathname === "/");
    await ready(desk);
    const waiting = desk.getByTestId("home-waiting");
    expect(await waiting.textContent()).toContain(`Wanda Aaahome${s.tag}`);
    expect(await waiting.textContent()).toContain("Arrived");
    expect(await desk.getByTestId("home-arrivals").textContent()).toContain(`Colin Aaahome${s.tag}`);
    expect(await desk.getByTestId("home-balances").textContent()).toContain(`Della Aaahome${s.tag}`);
    expect(await desk.getByTestId("home-move-requests").textContent()).toContain("Could we make it a Saturday?");
    expect(await desk.getByTestId("home-ready").textContent()).toContain(`Cora Aaahome${s.tag}`);
    expect(await desk.getByTestId("home-failed").textContent()).toContain("Mailbox unavailable (test)");
    // No practice-wide head counts on anyone's home.
    expect(await desk.getByText("Active accounts").count()).toBe(0);
    await expectAccessible(desk);

    // Each item leads to where it is acted on (followed by keyboard).
    await follow(
      desk,
      desk.getByTestId("home-balances").getByRole("link", { name: new RegExp(`for Della Aaahome${s.tag}`) }),
      `/billing/invoices/${s.invoice.id}`,
    );
    await expectAccessible(desk);
    await desk.goBack();
    await ready(desk);
    await follow(
      desk,
      desk.getByTestId("home-ready").getByRole("link", { name: new RegExp(`for Cora Aaahome${s.tag}`) }),
      `/orders/${s.order.id}`,
    );
    await desk.goBack();
    await ready(desk);
    await follow(desk, desk.getByRole("link", { name: "Failed messages" }), "/schedule/messages?status=failed");
    expect(await desk.getByText("Mailbox unavailable (test)").count()).toBeGreaterThan(0);
    await expectAccessible(desk);
    await desk.goBack();
    await ready(desk);
    await follow(
      desk,
      desk.getByTestId("home-waiting").getByRole("link", { name: new RegExp(`Wanda Aaahome${s.tag}`) }),
      `/schedule/appointments/${s.appointments.arrived.id}`,
    );
  }, 120_000);

  it("an optometrist's home shows their next patient, their own list, unsigned exams, replies and results, and links to them", async () => {
    const optom = await browser.newPage();
    await signIn(optom, s.optometrist.email);
    await optom.waitForURL((u) => u.pathname === "/");
    await ready(optom);
    expect(await optom.getByTestId("home-next").textContent()).toContain(`Wanda Aaahome${s.tag}`);
    const day = await optom.getByTestId("home-my-day").textContent();
    expect(day).toContain(`Colin Aaahome${s.tag}`);
    expect(day).toContain(`Della Aaahome${s.tag}`);
    expect(await optom.getByTestId("home-unsigned").textContent()).toContain("Not signed");
    expect(await optom.getByTestId("home-replies").textContent()).toContain("Dr Fictional Surgeon");
    expect(await optom.getByTestId("home-results").textContent()).toContain(`Field printout ${s.tag}`);
    // Nothing practice-wide: no takings, no head counts, nobody else's appointments.
    const body = (await optom.locator("main").textContent()) ?? "";
    expect(body).not.toContain("Active accounts");
    expect(body).not.toContain("Takings");
    await expectAccessible(optom);

    await follow(
      optom,
      optom.getByTestId("home-unsigned").getByRole("link", { name: /open the exam to finish and sign/ }),
      `/patients/${s.patients.waiting.id}/exams/${s.exam.id}`,
    );
    await optom.goBack();
    await ready(optom);
    await follow(
      optom,
      optom.getByTestId("home-replies").getByRole("link", { name: /read the reply/ }),
      `/referrals/${s.referral.id}`,
    );
    // The referral page itself, with the reply (not an error page).
    await optom.getByText("Seen in clinic; thank you.").waitFor();
    await expectAccessible(optom);
    // Read now: gone from the home page.
    await optom.goto("/");
    await ready(optom);
    expect(await optom.getByTestId("home-replies").textContent()).toContain("No unread replies");
    // A result: opened where it is shown, marked reviewed there, then gone from the home page.
    await follow(
      optom,
      optom.getByTestId("home-results").getByRole("link", { name: /open the exam to review it/ }),
      `/patients/${s.patients.waiting.id}/exams/${s.exam.id}`,
    );
    const tile = optom.locator(`#document-${s.document.id}`);
    await tile.getByRole("button", { name: /Mark reviewed/ }).click();
    await tile.getByTestId("document-reviewed").waitFor(SLOW);
    await expectAccessible(optom);
    await optom.goto("/");
    await ready(optom);
    expect(await optom.getByTestId("home-results").textContent()).toContain("No results are waiting");
  }, 120_000);

  it("the owner's home shows takings, visits kept, recall response, referral turnaround and exams to orders, each linked", async () => {
    const owner = await browser.newPage();
    await signIn(owner, DEMO.owner);
    await owner.waitForURL((u) => u.pathname === "/");
    await ready(owner);
    for (const id of [
      "home-takings-day",
      "home-takings-month",
      "home-visits",
      "home-recalls",
      "home-referrals",
      "home-exam-orders",
    ])
      expect(await owner.getByTestId(id).textContent()).toBeTruthy();
    expect(await owner.getByTestId("home-exam-orders").textContent()).toMatch(/led to an optical order/);
    await expectAccessible(owner);
    await follow(
      owner,
      owner.getByRole("link", { name: "This month's takings" }),
      /^\/billing\/takings\?month=\d{4}-\d{2}$/,
    );
    await expectAccessible(owner);
    await owner.goBack();
    await ready(owner);
    await follow(owner, owner.getByRole("link", { name: "Overdue referrals" }), "/referrals?status=overdue");
    await expectAccessible(owner);
  }, 120_000);
});

describe("lists and pickers over the whole register", () => {
  it("the booking form's patient search finds a patient who sorts after the first 500", async () => {
    const desk = await browser.newPage();
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL((u) => u.pathname === "/");
    await desk.goto("/schedule/book");
    await ready(desk);
    // The patients page's own type-ahead: type, arrow down, Enter chooses.
    const box = desk.getByRole("combobox", { name: "Patient" });
    await box.focus();
    await desk.keyboard.type(LATE.toLowerCase());
    await expect
      .poll(() => desk.getByTestId("patient-search-count").textContent(), SLOW)
      .toContain("1 patient matches");
    await expectAccessible(desk);
    await desk.keyboard.press("ArrowDown");
    await desk.keyboard.press("Enter");
    expect(await desk.getByTestId("chosen-patient").textContent()).toContain(`${LATE}, Yvette`);
    expect(await desk.locator('input[type="hidden"][name="patientId"]').inputValue()).toMatch(/^[0-9a-f-]{36}$/);
    await expectAccessible(desk);
  }, 120_000);

  it("the referrals and orders lists filter by patient on the server", async () => {
    const desk = await browser.newPage();
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL((u) => u.pathname === "/");
    await desk.goto("/referrals");
    await ready(desk);
    const patient = desk.getByLabel("Patient", { exact: true });
    await patient.fill(`Aaahome${s.tag}`);
    await patient.press("Enter");
    await desk.waitForURL((u) => u.searchParams.get("q") === `Aaahome${s.tag}`);
    await ready(desk);
    await expect.poll(() => desk.locator("tbody tr").count(), SLOW).toBe(1);
    expect(await desk.locator("tbody").textContent()).toContain(`Aaahome${s.tag}, Cora`);
    await expectAccessible(desk);

    await desk.goto("/orders?state=all");
    await ready(desk);
    await desk.getByLabel("Patient", { exact: true }).fill(`Aaahome${s.tag}`);
    await desk.getByLabel("Patient", { exact: true }).press("Enter");
    await desk.waitForURL((u) => u.searchParams.get("q") === `Aaahome${s.tag}`);
    await ready(desk);
    await expect.poll(() => desk.locator("tbody tr").count(), SLOW).toBe(1);
    expect(await desk.locator("tbody").textContent()).toContain(`Cora Aaahome${s.tag}`);
    await expectAccessible(desk);
  }, 120_000);
});
