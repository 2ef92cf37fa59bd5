import { execFileSync } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import type { Page } from "playwright-core";
import { describe, expect, it } from "vitest";
import { DEMO, expectAccessible, screenshot, signIn, useBrowser } from "./fixtures";

const browser = useBrowser();
const poll = <T>(fn: () => T | Promise<T>) => expect.poll(fn, { timeout: 10_000 });
const saved = (page: Page, section: string) =>
  poll(() => page.locator(`[data-section-status="${section}"]`).textContent()).toMatch(/Saved \d\d:\d\d/);

/** Opens a seeded patient's chart and starts a new exam; answers the exam's address. */
async function newExamFor(page: Page, lastName: string, firstName: string) {
  await page.goto(`/patients?q=${encodeURIComponent(lastName)}`);
  await page.getByRole("link", { name: `${lastName}, ${firstName}` }).click();
  await page.waitForURL(/\/patients\/[0-9a-f-]{36}$/);
  await page.getByRole("button", { name: "Start a new exam" }).click();
  await page.waitForURL(/\/exams\/[0-9a-f-]{36}$/);
  return new URL(page.url());
}

describe("clinical safety: red flags and triage from the exam to the letter", () => {
  it("flashes with a retinal break propose same day; the letter says so in words and is sent", async () => {
    const page = await browser.newPage({ viewport: { width: 1280, height: 1000 } });
    await signIn(page, DEMO.optometrist);
    await page.waitForURL("**/");

    // The patient's GP and "no known allergies", recorded on the patient form, go on the chart and into the letter.
    await page.goto(`/patients?q=${encodeURIComponent("Dunstan-Oyelaran")}`);
    await page.getByRole("link", { name: "Dunstan-Oyelaran, Philippa" }).click();
    await page.waitForURL(/\/patients\/[0-9a-f-]{36}$/);
    await page.getByRole("link", { name: "Edit details" }).click();
    await page.waitForURL(/\/edit$/);
    await page.getByLabel("GP's name").fill("Dr Peregrine Ashworth-Nwosu");
    await page.getByLabel("GP practice", { exact: true }).fill("Weir Street Surgery");
    await page.getByLabel("GP practice address").fill("2 Weir Street, Brackenford BF1 2AA");
    await page.getByLabel("GP practice contact number").fill("01632 960 321");
    await page.getByLabel("Allergies", { exact: true }).fill("Latex");
    await page.getByLabel("No known allergies (asked and recorded)").check();
    await page.getByRole("button", { name: "Save details" }).click();
    await poll(() => page.getByText(/clear the list or untick "No known allergies"/).count()).toBeGreaterThan(0);
    await expectAccessible(page);
    await page.getByLabel("Allergies", { exact: true }).fill("");
    await page.getByRole("button", { name: "Save details" }).click();
    await page.waitForURL(/\/patients\/[0-9a-f-]{36}$/);
    await poll(() => page.getByTestId("chart-allergies").textContent()).toBe("None known");
    await poll(() => page.getByTestId("chart-gp").textContent()).toBe(
      "Dr Peregrine Ashworth-Nwosu, Weir Street Surgery, 2 Weir Street, Brackenford BF1 2AA, Tel 01632 960 321",
    );

    const examUrl = await newExamFor(page, "Dunstan-Oyelaran", "Philippa");
    const examId = examUrl.pathname.split("/").pop()!;
    await poll(() => page.getByTestId("triage-urgency").textContent()).toBe("No referral proposed");

    // Red-flag history, by keyboard: the select takes the option from the keyboard.
    const flashes = page.getByLabel("Flashes of light");
    await flashes.focus();
    await flashes.selectOption("left");
    await page.getByLabel("New floaters").selectOption("left");
    await page
      .getByLabel("Onset, duration and details")
      .fill("Flashes in the left eye since this morning, then a shower of dots");
    await saved(page, "redflags");
    // New flashes and floaters without a break found yet: urgent (College of Optometrists guidance).
    await poll(() => page.getByTestId("triage-urgency").textContent()).toBe("Proposed: Urgent");

    // Acuity: a bare 1.0 cannot be read in metric Snellen; the entry says what it read.
    const best = page.getByLabel("Right distance best corrected VA", { exact: true });
    await best.fill("1.0");
    await poll(() => page.locator("[data-inline-error]").first().textContent()).toMatch(/cannot be read unambiguously/);
    await best.fill("6/9");
    await poll(() => page.locator("[data-echo]").first().textContent()).toBe("reads as 6/9, logMAR 0.18");
    await page.getByLabel("Left distance best corrected VA", { exact: true }).fill("6/6");
    await saved(page, "acuity");

    // The fundus finding: a retinal break in the left eye.
    await page.getByLabel("Left: retinal break (tear or hole)").check();
    await page.getByLabel("Left periphery").fill("Horseshoe tear at 1 o'clock");
    await saved(page, "fundus");
    await poll(() => page.getByTestId("triage-urgency").textContent()).toBe("Proposed: Same day");
    const panel = page.getByTestId("triage");
    await poll(() => panel.textContent()).toContain(
      "Left eye: Retinal break with flashes, floaters or a shadow in the vision",
    );
    await poll(() => panel.textContent()).toContain("Source: College of Optometrists");
    await poll(() => panel.textContent()).toContain("A prompt for your judgement, not a decision.");
    await expectAccessible(page);
    await screenshot(page, "exam-red-flag");

    // The same page on a tablet held upright.
    await page.setViewportSize({ width: 820, height: 1180 });
    await screenshot(page, "exam-red-flag-tablet");
    await page.setViewportSize({ width: 1280, height: 1000 });

    await page.getByRole("button", { name: "Sign exam" }).click();
    // No final refraction on a referral visit: signing asks first.
    await poll(() => page.getByTestId("sign-warnings").textContent()).toContain("no final refraction");
    await page.getByRole("button", { name: "Sign anyway" }).click();
    await poll(() => page.getByText(/^Signed by Tobias Wren/).count()).toBe(1);
    await poll(() => page.getByTestId("signatures").textContent()).toContain(
      "Signed by the examining clinician: Tobias Wren",
    );
    await expectAccessible(page);

    // The referral form pre-fills the proposed urgency with triage's reasons.
    await page.goto(`/referrals/new?exam=${examId}`);
    await poll(() => page.getByRole("heading", { level: 1 }).textContent()).toBe(
      "Referral for Philippa Dunstan-Oyelaran",
    );
    await poll(() => page.getByLabel("Urgency", { exact: true }).inputValue()).toBe("same_day");
    await poll(() => page.getByTestId("triage-proposal").textContent()).toMatch(/retinal break with flashes/i);
    await expectAccessible(page);
    await page.getByLabel("Send to").selectOption({ label: "Mr Lucan Ferreira-Holt, Brackenford Eye Unit" });
    await page
      .getByLabel("Letter text")
      .fill("Thank you for seeing Ms Dunstan-Oyelaran today: a symptomatic horseshoe tear in the left eye.");
    await page.getByRole("button", { name: "Save draft and preview" }).click();
    await page.waitForURL(/\/referrals\/[0-9a-f-]{36}\?preview=1/);
    const referralId = new URL(page.url()).pathname.split("/").pop()!;
    await poll(() => page.getByTitle("Referral letter preview (PDF)").count()).toBe(1);

    const pdf = await page.request.get(`/referrals/${referralId}/letter.pdf`);
    expect(pdf.headers()["content-type"]).toBe("application/pdf");
    const dir = mkdtempSync(join(tmpdir(), "clinical-e2e-"));
    writeFileSync(join(dir, "letter.pdf"), await pdf.body());
    const text = execFileSync("pdftotext", ["-raw", join(dir, "letter.pdf"), "-"], { encoding: "utf8" }).replace(
      /\s+/g,
      " ",
    );
    expect(text).toMatch(/Same day/i);
    expect(text.replace(/\s+/g, " ")).toMatch(/retinal break with flashes, floaters or a shadow in the vision/i);
    expect(text).toContain("Horseshoe tear at 1 o'clock");
    expect(text).toContain(
      "GP: Dr Peregrine Ashworth-Nwosu, Weir Street Surgery, 2 Weir Street, Brackenford BF1 2AA, Tel 01632 960 321",
    );
    expect(text).toContain("Allergies: None known");
    // The letter is for the ophthalmologist: plain clinical words, no rule sources or identifiers.
    expect(text).not.toContain("Guidance for Professional Practice");
    expect(text).not.toMatch(/IOP_|RETINAL_/);
    await expectAccessible(page);

    await screenshot(page, "referral-red-flag-letter");

    await page.getByRole("button", { name: "Send letter" }).click();
    await poll(() => page.getByText("Referral sent").count()).toBeGreaterThan(0);
    await poll(() => page.getByText("Sent", { exact: true }).count()).toBeGreaterThan(0);
    await expectAccessible(page);
    await screenshot(page, "referral-red-flag-sent");
  }, 240_000); // many autosaves, a PDF and an e-mail on a shared two-core machine

  it("IOP 25 by applanation proposes a routine referral; only the examiner signs and another clinician countersigns", async () => {
    const page = await browser.newPage({ viewport: { width: 1280, height: 1000 } });
    await signIn(page, DEMO.optometrist);
    await page.waitForURL("**/");
    const examUrl = await newExamFor(page, "Cresswell-Iqbal", "Barnaby");

    // Impossible values are refused with the reason, field by field.
    await page.getByLabel("Right IOP (mmHg)", { exact: true }).fill("90");
    await poll(() => page.locator("[data-inline-error]").first().textContent()).toMatch(/90 is outside 1 to 80/);
    await page.getByLabel("Right IOP (mmHg)", { exact: true }).fill("25");
    await page.getByLabel("Right IOP method", { exact: true }).selectOption("goldmann");
    await page.getByLabel("Right IOP time of day").fill("10:20");
    await page.getByLabel("Right IOP reading 2 (mmHg)").fill("25");
    await page.getByLabel("Left IOP (mmHg)", { exact: true }).fill("17");
    await page.getByLabel("Left IOP method", { exact: true }).selectOption("goldmann");
    await page.getByLabel("Left IOP time of day").fill("10:22");
    await saved(page, "iop");
    await poll(() => page.getByTestId("iop-mean-right").textContent()).toContain("2 readings, mean 25.0 mmHg");
    // NICE NG81: refer at 24 mmHg or more by applanation; triage proposes routine.
    await poll(() => page.getByTestId("triage-urgency").textContent()).toBe("Proposed: Routine");
    await poll(() => page.getByTestId("triage").textContent()).toContain("NICE");

    await page.getByLabel("Right vertical cup/disc ratio").fill("1.4");
    await poll(() => page.locator("[data-inline-error]").first().textContent()).toMatch(/outside 0 to 1/);
    await page.getByLabel("Right vertical cup/disc ratio").fill("0.45");
    await page.getByLabel("Left vertical cup/disc ratio").fill("0.4");
    await saved(page, "disc");
    await page.getByLabel("H40.0 Glaucoma suspect (includes ocular hypertension): eye").selectOption("right");
    await saved(page, "assessment");
    await expectAccessible(page);
    await screenshot(page, "exam-routine");

    // The owner is a clinician but not the examiner: no signing, countersigning once it is signed.
    const owner = await browser.newPage({ viewport: { width: 1280, height: 1000 } });
    await signIn(owner, DEMO.owner);
    await owner.waitForURL("**/");
    await owner.goto(examUrl.pathname);
    await poll(() => owner.getByText("Only the examining clinician (Tobias Wren) signs this exam.").count()).toBe(1);
    expect(await owner.getByRole("button", { name: "Sign exam" }).count()).toBe(0);
    await expectAccessible(owner);

    await page.getByRole("button", { name: "Sign exam" }).click();
    await page.getByRole("button", { name: "Sign anyway" }).click();
    await poll(() => page.getByText(/^Signed by Tobias Wren/).count()).toBe(1);
    expect(await page.getByRole("button", { name: "Countersign exam" }).count()).toBe(0);

    await owner.reload();
    await owner
      .getByLabel("Countersignature note (optional)")
      .fill("Reviewed: agree with routine referral for raised pressure.");
    await owner.getByRole("button", { name: "Countersign exam" }).click();
    await poll(() => owner.getByText("Exam countersigned").count()).toBeGreaterThan(0);
    await poll(() => owner.getByTestId("signatures").textContent()).toContain("Countersigned by Imogen Castellane");
    await poll(() => owner.getByTestId("signatures").textContent()).toContain(
      "Signed by the examining clinician: Tobias Wren",
    );
    await expectAccessible(owner);
    await screenshot(owner, "exam-countersigned");

    // The owner sets how the practice writes acuity; new entries read bare numbers in it.
    await owner.goto("/settings");
    const notation = owner.getByLabel("Acuity notation");
    await poll(() => notation.inputValue()).toBe("metric");
    await expectAccessible(owner);
    await notation.focus();
    await notation.selectOption("logmar");
    await owner.getByRole("button", { name: "Save practice details" }).click();
    await poll(() => owner.getByText("Practice details saved").count()).toBeGreaterThan(0);
    await owner.reload();
    await poll(() => owner.getByLabel("Acuity notation").inputValue()).toBe("logmar");
    // Back to metric Snellen, which the other browser tests type in.
    await owner.getByLabel("Acuity notation").selectOption("metric");
    await owner.getByRole("button", { name: "Save practice details" }).click();
    await poll(() => owner.getByText("Practice details saved").count()).toBeGreaterThan(0);
    await owner.reload();
    await poll(() => owner.getByLabel("Acuity notation").inputValue()).toBe("metric");
  }, 180_000);
});
