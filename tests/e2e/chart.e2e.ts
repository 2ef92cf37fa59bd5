import { execFileSync } from "node:child_process";
import { mkdtempSync, readFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import sharp from "sharp";
import { describe, expect, it } from "vitest";
import { DEMO, expectAccessible, screenshot, signIn, useBrowser } from "./fixtures";

const browser = useBrowser();

describe("the optometrist's day: patients, chart, exam, prescription, upload", () => {
  it("registers a patient and finds them by search; warns about a duplicate", async () => {
    const page = await browser.newPage();
    await signIn(page, DEMO.receptionist);
    await page.waitForURL("**/");
    await page.getByRole("navigation", { name: "Main" }).getByRole("link", { name: "Patients" }).click();
    await page.waitForURL("**/patients");
    await expectAccessible(page);
    await screenshot(page, "patients-table");
    await page.getByRole("link", { name: "Register a patient" }).click();
    const last = `Quarrendon${Date.now().toString(36)}`;
    await page.getByLabel("First name").fill("Ottoline");
    await page.getByLabel("Last name").fill(last);
    await page.getByLabel("Date of birth").fill("1983-02-14");
    await page.getByLabel("Phone", { exact: true }).fill("07700 900 284");
    await expectAccessible(page);
    await page.getByRole("button", { name: "Register patient" }).click();
    await page.waitForURL(/\/patients\/[0-9a-f-]{36}$/);
    await expect.poll(() => page.getByRole("heading", { level: 1 }).textContent()).toBe(`${last}, Ottoline`);
    await expectAccessible(page);
    await screenshot(page, "chart-front-desk");

    await page.getByRole("link", { name: "Edit details" }).click();
    await page.waitForURL(/\/edit$/);
    await page.getByLabel("Phone", { exact: true }).fill("call me maybe");
    await page.getByRole("button", { name: "Save details" }).click();
    await expect.poll(() => page.getByText("Use digits, spaces and + ( ) - only.").count()).toBe(1);
    await expectAccessible(page);
    await page.getByLabel("Phone", { exact: true }).fill("07700 900 285");
    await page.getByRole("button", { name: "Save details" }).click();
    await page.waitForURL(/\/patients\/[0-9a-f-]{36}$/);
    await expect.poll(() => page.getByText("07700 900 285").count()).toBeGreaterThan(0);

    await page.goto("/patients/new");
    await page.getByLabel("First name").fill("ottoline");
    await page.getByLabel("Last name").fill(last);
    await page.getByLabel("Date of birth").fill("1983-02-14");
    await page.getByRole("button", { name: "Register patient" }).click();
    await expect.poll(() => page.getByText("This may be a patient who is already registered").count()).toBe(1);
    await expectAccessible(page);

    await page.goto("/patients");
    const search = page.getByRole("combobox", { name: "Find a patient" });
    await search.fill(last.slice(2, 12).toLowerCase());
    await expect.poll(() => page.getByRole("option").first().textContent()).toContain(`${last}, Ottoline`);
    await search.press("ArrowDown");
    await search.press("Enter");
    await page.waitForURL(/\/patients\/[0-9a-f-]{36}$/);
    await expect.poll(() => page.getByRole("heading", { level: 1 }).textContent()).toBe(`${last}, Ottoline`);
  });

  it("asks for a child's parent or guardian, and shows them on the chart", async () => {
    const page = await browser.newPage();
    await signIn(page, DEMO.receptionist);
    await page.waitForURL("**/");
    await page.goto("/patients/new");
    const last = `Wickerby${Date.now().toString(36)}`;
    const child = new Date(Date.now() - 9 * 365.25 * 864e5).toISOString().slice(0, 10);
    await page.getByLabel("First name").fill("Tamsin");
    await page.getByLabel("Last name").fill(last);
    await page.getByLabel("Date of birth").fill(child);
    expect(await page.getByText("Required for a patient under 16").count()).toBe(1);
    await page.getByRole("button", { name: "Register patient" }).click();
    const nameField = page.getByLabel("Guardian's name");
    await expect.poll(() => nameField.getAttribute("aria-invalid")).toBe("true");
    expect(await page.getByText(/give the parent's or guardian's name/).count()).toBe(1);
    expect(await page.getByText(/give the guardian's phone or e-mail/).count()).toBe(1);
    await expectAccessible(page);
    await nameField.fill("Rosamund " + last);
    await page.getByLabel("Relationship to the patient").fill("Mother");
    await page.getByLabel("Guardian's e-mail").fill(`rosamund.${last.toLowerCase()}@example.test`);
    await page.getByRole("button", { name: "Register patient" }).click();
    await page.waitForURL(/\/patients\/[0-9a-f-]{36}$/);
    await expect
      .poll(() => page.getByTestId("chart-guardian-header").textContent())
      .toContain(`Mother: Rosamund ${last}`);
    expect(await page.getByTestId("chart-guardian").textContent()).toContain(
      `rosamund.${last.toLowerCase()}@example.test`,
    );
    await expectAccessible(page);
  });

  it("runs an exam: typo with inline error, change from last year, sign, prescription PDF, upload", async () => {
    const page = await browser.newPage({ viewport: { width: 1280, height: 1000 } });
    await signIn(page, DEMO.optometrist);
    await page.waitForURL("**/");
    await page.goto("/patients");
    const search = page.getByRole("combobox", { name: "Find a patient" });
    await search.fill("sorrell-am");
    await expect.poll(() => page.getByRole("option").first().textContent()).toContain("Sorrell-Amadi, Benedikt");
    await search.press("ArrowDown");
    await search.press("Enter");
    await page.waitForURL(/\/patients\/[0-9a-f-]{36}$/);
    await expectAccessible(page);
    await screenshot(page, "chart-clinical");
    await page.getByRole("button", { name: "Start a new exam" }).click();
    await page.waitForURL(/\/exams\/[0-9a-f-]{36}$/);
    await expect.poll(() => page.getByTestId("previous-final-left").textContent()).toContain("-3.50 -0.75 x 170");

    const right = page.getByLabel("Right final sphere, cylinder and axis", { exact: true });
    await right.fill("+0.75 -0.50 x 195");
    await expect.poll(() => page.locator("[data-inline-error]").first().textContent()).toMatch(/195/);
    await expect
      .poll(() => page.locator('[data-section-status="refraction:final"]').textContent())
      .toContain("Not saved");
    await screenshot(page, "exam-typo");
    await right.fill("+0.75 -0.50 x 175");
    await page.getByLabel("Left final sphere, cylinder and axis", { exact: true }).fill("-4.50 -0.75 x 170");
    await page.getByLabel("Left final VA", { exact: true }).fill("6/6");
    await expect.poll(() => page.locator("[data-inline-error]").count()).toBe(0);
    await expect.poll(() => page.getByTestId("change-left").textContent()).toContain("Meaningful change: 1.00 D");
    await expect.poll(() => page.getByTestId("change-left").textContent()).toContain("ΔM −1.00");
    await expect
      .poll(() => page.locator('[data-section-status="refraction:final"]').textContent(), { timeout: 10_000 })
      .toMatch(/Saved \d\d:\d\d/);

    // A save that never reaches the server keeps the text and says why; the next change saves it.
    const offline = /\.data(\?|$)/;
    await page.route(offline, (route) =>
      route.request().method() === "POST" ? route.abort("internetdisconnected") : route.continue(),
    );
    await page.getByLabel("Reason for visit").fill("Blurred distance vision when driving at night");
    await expect
      .poll(() => page.locator('[data-section-status="history"]').textContent(), { timeout: 10_000 })
      .toContain("Not saved");
    // The history section says why (another section whose save-on-blur fell in the same moment may say so too).
    await expect
      .poll(() =>
        page
          .locator("#section-history")
          .getByText(/could not be reached/)
          .count(),
      )
      .toBe(1);
    expect(await page.getByLabel("Reason for visit").inputValue()).toBe(
      "Blurred distance vision when driving at night",
    );
    await page.unroute(offline);
    await page.getByLabel("Reason for visit").press("End");
    await page.getByLabel("Reason for visit").pressSequentially(".");
    await expect
      .poll(() => page.locator('[data-section-status="history"]').textContent(), { timeout: 10_000 })
      .toMatch(/Saved \d\d:\d\d/);

    await page.getByLabel("Right IOP (mmHg)").fill("27");
    await page.getByLabel("Right IOP method", { exact: true }).selectOption("goldmann");
    await page.getByLabel("Right IOP time of day").fill("10:20");
    await expect
      .poll(() => page.locator('[data-section-status="iop"]').textContent(), { timeout: 10_000 })
      .toMatch(/Saved/);
    await page.reload();
    await expect
      .poll(() => page.getByTestId("referral-prompts").textContent())
      .toMatch(/Right IOP 27 mmHg by applanation/);
    await expect
      .poll(() => page.getByLabel("Left final sphere, cylinder and axis", { exact: true }).inputValue())
      .toBe("-4.50 -0.75 x 170");

    const png = await sharp({ create: { width: 500, height: 400, channels: 3, background: { r: 150, g: 70, b: 40 } } })
      .png()
      .toBuffer();
    await page
      .getByLabel("File (JPEG, PNG, WebP or PDF, up to 15 MB)")
      .setInputFiles({ name: "right-fundus.png", mimeType: "image/png", buffer: png });
    await page.getByRole("button", { name: "Attach" }).click();
    await expect.poll(() => page.getByText("right-fundus.png attached.").count()).toBe(1);
    await expect.poll(() => page.getByRole("img", { name: "Thumbnail of right-fundus.png" }).count()).toBe(1);
    await expectAccessible(page);
    await screenshot(page, "exam-entry");

    await page.getByRole("button", { name: "Sign exam" }).click();
    await expect.poll(() => page.getByText(/^Signed by Tobias Wren/).count()).toBe(1);
    await expect
      .poll(() => page.getByLabel("Left final sphere, cylinder and axis", { exact: true }).isDisabled())
      .toBe(true);
    await page.getByLabel("Part of the exam").fill("Case history");
    await page.getByLabel("Correction", { exact: true }).fill("Also reports eye strain after screen work.");
    await page.getByRole("button", { name: "Add addendum" }).click();
    await expect.poll(() => page.getByText("Also reports eye strain after screen work.").count()).toBe(1);

    await page.getByLabel("Lens use").selectOption("varifocal");
    await page.getByRole("button", { name: "Issue prescription" }).click();
    const link = page.getByRole("link", { name: "Download PDF" });
    await expect.poll(() => link.count()).toBe(1);
    await expectAccessible(page);
    await screenshot(page, "exam-signed");
    const [download] = await Promise.all([page.waitForEvent("download"), link.click()]);
    const file = join(mkdtempSync(join(tmpdir(), "rx-e2e-")), "rx.pdf");
    await download.saveAs(file);
    expect(readFileSync(file).subarray(0, 5).toString()).toBe("%PDF-");
    const text = execFileSync("pdftotext", ["-layout", file, "-"]).toString();
    expect(text).toContain("Spectacle prescription");
    expect(text).toContain("Benedikt Sorrell-Amadi");
    expect(text).toContain("−4.50");
    expect(text).toContain("Tobias Wren");
    expect(text).toContain("01-31982");
    expect(text).toContain("Check every value against the signed exam before ordering lenses.");
  });

  it("gives the front desk a 403 on an exam page", async () => {
    const page = await browser.newPage();
    await signIn(page, DEMO.optometrist);
    await page.waitForURL("**/");
    await page.goto("/patients?q=Strand-Achebe");
    await page.getByRole("link", { name: "Strand-Achebe, Wilhelmina" }).click();
    await page.waitForURL(/\/patients\/[0-9a-f-]{36}$/);
    // A single non-contact reading of 26 mmHg is advice to repeat by applanation, not a referral prompt (NICE NG81 1.1.2).
    await expect
      .poll(() => page.getByText(/Repeat the measurement \(not a referral prompt\): Right IOP 26 mmHg/).count())
      .toBeGreaterThan(0);
    expect(await page.getByText(/Referral prompt: Right IOP 26 mmHg/).count()).toBe(0);
    await page
      .getByRole("link", { name: /signed$/ })
      .first()
      .click();
    await page.waitForURL(/\/exams\//);
    const examUrl = page.url();
    await expect
      .poll(() => page.getByTestId("repeat-advice").first().textContent())
      .toMatch(/Repeat the measurement: Right IOP 26 mmHg/);
    await expectAccessible(page);
    await screenshot(page, "exam-referral-candidate");
    await page.goto("/patients?q=Maddox-Ferreira");
    await page.getByRole("link", { name: "Maddox-Ferreira, Corentin" }).click();
    await page.waitForURL(/\/patients\/[0-9a-f-]{36}$/);
    await page
      .getByRole("link", { name: /signed$/ })
      .first()
      .click();
    await page.waitForURL(/\/exams\//);
    // 6 of plates 1–15 read normally: the 38-plate criterion (9 or fewer) reads as deficiency suspected.
    await expect
      .poll(() => page.getByTestId("plate-screening").first().textContent())
      .toContain("deficiency suspected");
    const desk = await browser.newPage();
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL("**/");
    const res = await desk.goto(examUrl);
    expect(res?.status()).toBe(403);
  });
});
