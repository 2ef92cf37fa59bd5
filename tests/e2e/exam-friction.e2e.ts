/**
 * The exam page's everyday friction: where each section stands after a reload, the IOP section's
 * time and required fields, copying the subjective refraction into the final, warnings before
 * signing, a final refraction given by addendum, signing completing the visit, and the sticky
 * section menu with touch-sized targets on a tablet.
 */
import type { Page } from "playwright-core";
import { describe, expect, it } from "vitest";
import { DEMO, expectAccessible, screenshot, signIn, testDb, useBrowser } from "./fixtures";

const browser = useBrowser();
const poll = <T>(fn: () => T | Promise<T>) => expect.poll(fn, { timeout: 10_000 });
const tag = Date.now().toString(36);
const status = (page: Page, section: string) => page.locator(`[data-section-status="${section}"]`);
const savedWithTime = (page: Page, section: string) =>
  poll(() => status(page, section).textContent()).toMatch(/Saved \d\d:\d\d/);

async function q<T>(sql: string, params: unknown[] = []) {
  return (await testDb().query(sql, params)).rows as T[];
}

async function newPatient(first: string, last: string) {
  const [p] = await q<{ id: string }>(
    "insert into patients (first_name, last_name, date_of_birth) values ($1, $2, date '1968-05-17') returning id",
    [first, last],
  );
  return p!.id;
}

/** Opens the patient's chart and starts a new exam from it. */
async function startExam(page: Page, patientId: string) {
  await page.goto(`/patients/${patientId}`);
  await page.getByRole("button", { name: "Start a new exam" }).click();
  await page.waitForURL(/\/exams\/[0-9a-f-]{36}$/);
}

/** Clicks and key presses the optometrist makes, counted as the test makes them. */
function counter() {
  let n = 0;
  return {
    click: async (l: { click: () => Promise<void> }) => {
      n++;
      await l.click();
    },
    get count() {
      return n;
    },
  };
}

describe("exam page: states after a reload, IOP, signing, addendum, the visit, the menu", () => {
  it("shows each section's true state after a reload: saved with its time, refused with what was typed, not sent", async () => {
    const page = await browser.newPage({ viewport: { width: 1280, height: 900 } });
    await signIn(page, DEMO.optometrist);
    await page.waitForURL("**/");
    await startExam(page, await newPatient("Perpetua", `Lindqvist${tag}`));

    // Nothing typed: the badge says so, with the info icon's word, not a green tick.
    await poll(() => status(page, "history").getAttribute("data-state")).toBe("empty");
    expect(await status(page, "history").textContent()).toContain("Nothing entered yet");

    await page.getByLabel("Reason for visit").fill("Routine check, new reading glasses wanted");
    await savedWithTime(page, "history");
    const savedText = await status(page, "history").textContent();

    // A refused save: the final refraction's axis 195 does not exist.
    await page.getByLabel("Right final sphere, cylinder and axis", { exact: true }).fill("+0.75 -0.50 x 195");
    await poll(() => status(page, "refraction:final").getAttribute("data-state")).toBe("failed");

    // A save that never reaches the server (connection lost).
    const offline = /\.data(\?|$)/;
    await page.route(offline, (route) =>
      route.request().method() === "POST" ? route.abort("internetdisconnected") : route.continue(),
    );
    await page.getByLabel("Cover test, distance").fill("Ortho");
    await poll(() => status(page, "binocular").getAttribute("data-state")).toBe("failed");
    await page.unroute(offline);

    await page.reload();
    // Saved: the same time as before the reload (was "Nothing entered yet" with a tick).
    await poll(() => status(page, "history").textContent()).toBe(savedText);
    expect(await status(page, "history").getAttribute("data-state")).toBe("saved");
    // Refused: the typed text is back, with the server's reason, and the badge says "Not saved".
    await poll(() => status(page, "refraction:final").textContent()).toContain("Not saved");
    await poll(() => page.getByLabel("Right final sphere, cylinder and axis", { exact: true }).inputValue()).toBe(
      "+0.75 -0.50 x 195",
    );
    await poll(() => page.locator("[data-inline-error]").first().textContent()).toMatch(/195/);
    // Not sent: kept in this tab, back in the field, the reason given.
    await poll(() => status(page, "binocular").textContent()).toContain("Not saved");
    expect(await page.getByLabel("Cover test, distance").inputValue()).toBe("Ortho");
    await poll(() => page.getByText(/could not be reached/).count()).toBe(1);
    // The menu shows the same states in words.
    const menu = page.getByRole("navigation", { name: "Exam sections" });
    await poll(() => menu.locator('[data-menu-section="history"]').textContent()).toContain("saved");
    await poll(() => menu.locator('[data-menu-section="binocular"]').textContent()).toContain("not saved");
    await expectAccessible(page);
    await screenshot(page, "exam-states-after-reload");

    await page.getByRole("button", { name: "Save binocular vision now" }).click();
    await savedWithTime(page, "binocular");
    await page.getByLabel("Right final sphere, cylinder and axis", { exact: true }).fill("+0.75 -0.50 x 175");
    await savedWithTime(page, "refraction:final");
    await page.reload();
    await savedWithTime(page, "binocular");
    await savedWithTime(page, "refraction:final");
    expect(await page.getByLabel("Cover test, distance").inputValue()).toBe("Ortho");
  }, 90_000);

  it("IOP: the time defaults to now, required fields are marked, a refused save keeps the values, titles not codes", async () => {
    const page = await browser.newPage({ viewport: { width: 1280, height: 900 } });
    await signIn(page, DEMO.optometrist);
    await page.waitForURL("**/");
    await startExam(page, await newPatient("Ignatius", `Ferreira${tag}`));

    const method = page.getByLabel("Right IOP method", { exact: true });
    const time = page.getByLabel("Right IOP time of day", { exact: true });
    expect(await method.getAttribute("aria-required")).toBe("true");
    expect(await time.getAttribute("aria-required")).toBe("true");
    await poll(() => page.locator('label[for="iop-right-method"]').locator("xpath=..").textContent()).toContain(
      "(required)",
    );

    await page.getByLabel("Right IOP (mmHg)").fill("18");
    await method.selectOption("goldmann");
    await poll(() => time.inputValue()).toMatch(/^\d\d:\d\d$/);
    await savedWithTime(page, "iop");

    // No method: refused with the specific error; the values stay, and stay after a reload.
    await page.getByLabel("Left IOP (mmHg)").fill("31");
    await poll(() => status(page, "iop").getAttribute("data-state")).toBe("failed");
    await poll(() => page.getByText("Left IOP: choose the method.").count()).toBeGreaterThan(0);
    await page.reload();
    await poll(() => page.getByLabel("Left IOP (mmHg)").inputValue()).toBe("31");
    expect(await page.getByLabel("Right IOP (mmHg)").inputValue()).toBe("18");
    expect(await time.inputValue()).toMatch(/^\d\d:\d\d$/);
    await poll(() => page.getByText("Left IOP: choose the method.").count()).toBeGreaterThan(0);
    await poll(() => status(page, "iop").textContent()).toContain("Not saved");

    // Signing names the section by its title, never its code.
    await page.getByRole("button", { name: "Sign exam" }).click();
    const warnings = page.getByTestId("sign-warnings");
    await poll(() => warnings.textContent()).toContain("Intraocular pressure");
    expect(await warnings.textContent()).not.toMatch(/\biop\b/);
    await expectAccessible(page);
    await page.getByRole("button", { name: "Keep editing" }).click();

    await page.getByLabel("Left IOP method", { exact: true }).selectOption("goldmann");
    await savedWithTime(page, "iop");
    await page.reload();
    await savedWithTime(page, "iop");
    expect(await page.getByLabel("Left IOP (mmHg)").inputValue()).toBe("31");
    expect(await page.getByLabel("Left IOP time of day", { exact: true }).inputValue()).toMatch(/^\d\d:\d\d$/);
  }, 90_000);

  it("from the day list to a prescription: copy subjective to final, warned signing, the visit completed", async () => {
    const [optom] = await q<{ id: string }>("select id from users where email = $1", [DEMO.optometrist]);
    const [type] = await q<{ id: string }>("select id from appointment_types where name = 'Comprehensive eye exam'");
    const [zone] = await q<{ tz: string }>("select time_zone as tz from practice_settings where id = 1");
    const patientId = await newPatient("Clementine", `Oyelaran${tag}`);
    // Late in the practice's day, clear of the demo diary.
    const [appt] = await q<{ id: string; day: string }>(
      `insert into appointments (patient_id, provider_id, appointment_type_id, starts_at, ends_at, status)
       values ($1, $2, $3, (date_trunc('day', now() at time zone $4) + interval '22 hours 10 minutes') at time zone $4,
               (date_trunc('day', now() at time zone $4) + interval '22 hours 40 minutes') at time zone $4, 'arrived')
       returning id, to_char(starts_at at time zone $4, 'YYYY-MM-DD') as day`,
      [patientId, optom!.id, type!.id, zone!.tz],
    );
    const page = await browser.newPage({ viewport: { width: 1280, height: 900 } });
    await signIn(page, DEMO.optometrist);
    await page.waitForURL("**/");
    await page.goto(`/schedule/day?date=${appt!.day}`);
    const row = page.locator(`tr[data-appointment-id="${appt!.id}"]`);
    await row.getByRole("button", { name: /^Start exam/ }).click();
    // Starting the exam opens it.
    await page.waitForURL(/\/exams\/[0-9a-f-]{36}$/);
    const [exam] = await q<{ id: string; status: string }>(
      "select e.id, a.status from exams e join appointments a on a.id = e.appointment_id where a.id = $1",
      [appt!.id],
    );
    expect(exam!.status).toBe("in_exam");
    expect(page.url()).toContain(exam!.id);

    const c = counter();
    await page.getByLabel("Right subjective sphere, cylinder and axis", { exact: true }).fill("-1.25 -0.50 x 90");
    await page.getByLabel("Left subjective sphere, cylinder and axis", { exact: true }).fill("-1.00");
    await page.getByLabel("Right subjective add", { exact: true }).fill("+1.50");
    await page.getByLabel("Left subjective add", { exact: true }).fill("+1.50");
    await savedWithTime(page, "refraction:subjective");

    // Signing with no final refraction warns first (it used to sign at once).
    await c.click(page.getByRole("button", { name: "Sign exam" }));
    await poll(() => page.getByTestId("sign-warnings").textContent()).toContain("no prescription can be issued");
    await expectAccessible(page);
    await c.click(page.getByRole("button", { name: "Keep editing" }));

    await c.click(page.getByRole("button", { name: /^Both eyes/ }));
    await poll(() => page.getByLabel("Right final sphere, cylinder and axis", { exact: true }).inputValue()).toBe(
      "-1.25 -0.50 x 90",
    );
    expect(await page.getByLabel("Left final add", { exact: true }).inputValue()).toBe("+1.50");
    await savedWithTime(page, "refraction:final");
    await c.click(page.getByRole("button", { name: "Sign exam" }));
    await poll(() => page.getByText(/^Signed by Tobias Wren/).count()).toBe(1);

    // The visit is completed with the signature, with its history row.
    const [a] = await q<{ status: string }>("select status from appointments where id = $1", [appt!.id]);
    expect(a!.status).toBe("completed");
    const changes = await q<{ from_status: string; to_status: string }>(
      "select from_status, to_status from appointment_status_changes where appointment_id = $1 order by changed_at",
      [appt!.id],
    );
    expect(changes.at(-1)).toEqual({ from_status: "in_exam", to_status: "completed" });

    await page.getByLabel("Lens use").selectOption("distance");
    await c.click(page.getByRole("button", { name: "Issue prescription" }));
    await poll(() => page.getByRole("link", { name: "Download PDF" }).count()).toBe(1);
    // Copy (1) + sign (1) + issue (1), plus the warning's two clicks this test made on purpose.
    expect(c.count).toBe(5);

    await page.goto(`/schedule/day?date=${appt!.day}`);
    await poll(() => row.textContent()).toContain("Completed");
    await expectAccessible(page);
  }, 120_000);

  it("an exam signed without a final refraction gets one by addendum, and a prescription from it", async () => {
    const page = await browser.newPage({ viewport: { width: 1280, height: 900 } });
    await signIn(page, DEMO.optometrist);
    await page.waitForURL("**/");
    await startExam(page, await newPatient("Barnaby", `Achterberg${tag}`));
    await page.getByLabel("Right subjective sphere, cylinder and axis", { exact: true }).fill("+2.00 -0.25 x 10");
    await page.getByLabel("Left subjective sphere, cylinder and axis", { exact: true }).fill("+2.25");
    await savedWithTime(page, "refraction:subjective");

    const c = counter();
    await c.click(page.getByRole("button", { name: "Sign exam" }));
    await c.click(page.getByRole("button", { name: "Sign anyway" }));
    await poll(() => page.getByText(/^Signed by Tobias Wren/).count()).toBe(1);
    await poll(() => page.getByText("No final refraction").count()).toBeGreaterThan(0);

    await c.click(page.getByRole("button", { name: "Use the subjective refraction" }));
    expect(await page.getByLabel("Right final sphere, cylinder and axis", { exact: true }).inputValue()).toBe(
      "+2.00 -0.25 x 10",
    );
    await expectAccessible(page);
    await c.click(page.getByRole("button", { name: "Add addendum" }));
    await poll(() => page.getByTestId("final-from-addendum").textContent()).toContain("Tobias Wren");
    await page.getByLabel("Lens use").selectOption("distance");
    await c.click(page.getByRole("button", { name: "Issue prescription" }));
    await poll(() => page.getByRole("link", { name: "Download PDF" }).count()).toBe(1);
    await poll(() => page.locator("#prescriptions").textContent()).toContain("+2.25");
    expect(c.count).toBe(5);

    // With a final refraction given, later addenda correct it in words only.
    expect(await page.getByRole("group", { name: "Final refraction (optional)" }).count()).toBe(0);
  }, 90_000);

  it("tablet: the section menu stays in view while scrolling and every target is at least 24 × 24 px", async () => {
    const page = await browser.newPage({ viewport: { width: 820, height: 1180 } });
    await signIn(page, DEMO.optometrist);
    await page.waitForURL("**/");
    await startExam(page, await newPatient("Wilhelmina", `Nakashima${tag}`));
    const menu = page.getByRole("navigation", { name: "Exam sections" });
    await page.getByLabel("Reason for visit").fill("Headaches when reading");
    await savedWithTime(page, "history");

    await page.mouse.wheel(0, 6000);
    await poll(() => page.evaluate(() => window.scrollY)).toBeGreaterThan(2000);
    const box = await menu.boundingBox();
    expect(box!.y).toBeGreaterThanOrEqual(-1);
    expect(box!.y).toBeLessThan(100);
    await poll(() => menu.locator('[data-menu-section="history"]').textContent()).toContain("saved");

    // WCAG 2.2 SC 2.5.8 Target Size (Minimum): 24 by 24 CSS pixels.
    for (const link of await menu.getByRole("link").all()) {
      const b = await link.boundingBox();
      if (!b) continue; // scrolled out of the menu's own row
      expect(b.width, (await link.textContent()) ?? "").toBeGreaterThanOrEqual(24);
      expect(b.height, (await link.textContent()) ?? "").toBeGreaterThanOrEqual(24);
    }
    const rows = page.locator("form label:has(input[type=checkbox])");
    expect(await rows.count()).toBeGreaterThan(10);
    for (const row of await rows.all()) {
      const b = await row.boundingBox();
      expect(b!.height, (await row.textContent()) ?? "").toBeGreaterThanOrEqual(24);
      expect(b!.width, (await row.textContent()) ?? "").toBeGreaterThanOrEqual(24);
    }
    await menu.locator('[data-menu-section="iop"]').click();
    await poll(() => page.evaluate(() => location.hash)).toBe("#section-iop");
    await expectAccessible(page);
    await screenshot(page, "exam-tablet-menu");
  }, 90_000);
});
