import { execFileSync } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import pg from "pg";
import { afterAll, beforeAll, describe, expect, inject, it } from "vitest";
import { DEMO, expectAccessible, mailTo, screenshot, signIn, useBrowser } from "./fixtures";

const browser = useBrowser();
/** Polls for up to 10 s: server round trips (PDF rendering, SMTP) take longer than Vitest's default second. */
const poll = <T>(fn: () => T | Promise<T>) => expect.poll(fn, { timeout: 10_000 });
let client: pg.Client;

beforeAll(async () => {
  client = new pg.Client({ connectionString: inject("e2eDatabaseUrl") });
  await client.connect();
});
afterAll(async () => {
  await client?.end();
});

/** The seeded referral candidate, found by its findings: a signed exam with IOP above 21 mmHg and an enlarged blind spot (wider than 7.5°). */
async function seededCandidate() {
  const { rows } = await client.query<{
    exam_id: string;
    patient_id: string;
    name: string;
    mm_hg: number;
    width: number;
    height: number;
  }>(`
    select e.id as exam_id, e.patient_id, p.first_name || ' ' || p.last_name as name, i.mm_hg, f.blind_spot_width_deg as width, f.blind_spot_height_deg as height
    from exams e
    join patients p on p.id = e.patient_id
    join exam_iop i on i.exam_id = e.id and i.mm_hg > 21
    join exam_visual_fields f on f.exam_id = e.id and f.eye = i.eye and f.blind_spot_width_deg > 7.5
    where e.status = 'signed'
      and not exists (select 1 from referrals r where r.exam_id = e.id)
    order by e.signed_at desc
    limit 1`);
  expect(rows[0], "the seed has a signed exam with raised IOP and an enlarged blind spot").toBeTruthy();
  return rows[0]!;
}

describe("a referral from the exam to the ophthalmologist's reply", () => {
  it("is drafted, previewed and sent; the ophthalmologist acknowledges and replies; the reply reaches the optometrist", async () => {
    const candidate = await seededCandidate();
    const page = await browser.newPage({ viewport: { width: 1280, height: 1000 } });
    await signIn(page, DEMO.optometrist);
    await page.waitForURL("**/");

    // The candidates list offers the exam; start the referral from it.
    await page.getByRole("navigation", { name: "Main" }).getByRole("link", { name: "Referrals" }).click();
    await page.waitForURL("**/referrals");
    await expectAccessible(page);
    await page.getByRole("link", { name: "New referral" }).click();
    await page.waitForURL("**/referrals/new");
    await expectAccessible(page);
    await page.goto(`/referrals/new?exam=${candidate.exam_id}`);
    await poll(() => page.getByRole("heading", { level: 1 }).textContent()).toBe(`Referral for ${candidate.name}`);
    // The prompts of the exam are listed with their values and rules; those to consider referral are pre-selected
    // (a request to repeat a non-contact pressure is listed unticked).
    await poll(() =>
      page.getByRole("checkbox", { name: new RegExp(`Right (mean )?IOP ${candidate.mm_hg} mmHg`) }).count(),
    ).toBe(1);
    await poll(() => page.getByRole("checkbox", { name: /Right blind spot enlarged/ }).isChecked()).toBe(true);
    // Triage's proposal (or that it proposes none) is shown beside the urgency.
    await poll(() => page.getByTestId("triage-proposal").count()).toBe(1);
    await poll(() => page.getByText(`${candidate.width}° × ${candidate.height}° centred`).count()).toBeGreaterThan(0);
    await expectAccessible(page);
    await screenshot(page, "referral-compose");

    // Sending without a recipient asks for one.
    await page.getByRole("button", { name: "Save draft and preview" }).click();
    await page.waitForURL(/\/referrals\/[0-9a-f-]{36}\?preview=1/);
    const referralUrl = new URL(page.url());
    const referralId = referralUrl.pathname.split("/").pop()!;
    await page.getByRole("button", { name: "Send letter" }).click();
    await poll(() => page.getByText("Choose a recipient with an e-mail address").count()).toBeGreaterThan(0);
    await expectAccessible(page);

    await page.getByLabel("Send to").selectOption({ label: "Mr Lucan Ferreira-Holt, Brackenford Eye Unit" });
    await page
      .getByLabel("Letter text")
      .fill(
        `Thank you for seeing ${candidate.name}. Raised pressure and an enlarged blind spot in the right eye; I would value your assessment.`,
      );
    // The address already ends in ?preview=1: wait for the save itself and the page it leads to.
    await Promise.all([
      page.waitForResponse((r) => r.request().method() === "POST" && r.url().includes(`/referrals/${referralId}`)),
      page.getByRole("button", { name: "Save draft and preview" }).click(),
    ]);
    await poll(() => page.getByText("Draft saved").count()).toBeGreaterThan(0);
    await poll(() => page.getByTitle("Referral letter preview (PDF)").count()).toBe(1);
    await poll(() => page.getByLabel("Send to").inputValue()).not.toBe("");
    // The preview is the letter PDF with the exam's values.
    const preview = await page.request.get(`/referrals/${referralId}/letter.pdf`);
    expect(preview.headers()["content-type"]).toBe("application/pdf");
    const dir = mkdtempSync(join(tmpdir(), "referral-e2e-"));
    writeFileSync(join(dir, "letter.pdf"), await preview.body());
    const text = execFileSync("pdftotext", ["-raw", join(dir, "letter.pdf"), "-"], { encoding: "utf8" }).replace(
      /\s+/g,
      " ",
    );
    expect(text).toContain(`${candidate.mm_hg} mmHg`);
    expect(text).toContain(`${candidate.width}° × ${candidate.height}°`);
    expect(text).toContain("Mr Lucan Ferreira-Holt");
    expect(text).toContain("I would value your assessment.");
    await expectAccessible(page);
    await screenshot(page, "referral-preview");

    // The letter reads in at most two pages (before its enclosures), and carries the exam's assessment and plan.
    const pages = Number(
      /Pages:\s+(\d+)/.exec(execFileSync("pdfinfo", [join(dir, "letter.pdf")], { encoding: "utf8" }))![1],
    );
    expect(pages).toBeLessThanOrEqual(2);
    expect(text).toContain("Assessment and plan");
    // Sending sits under the preview: the letter is read before it goes.
    const send = page.getByRole("button", { name: "Send letter" });
    const previewBox = (await page.getByTitle("Referral letter preview (PDF)").boundingBox())!;
    expect((await send.boundingBox())!.y).toBeGreaterThan(previewBox.y + previewBox.height);
    await send.click();
    await poll(() => page.getByText("Referral sent").count()).toBeGreaterThan(0);
    await poll(() => page.getByText("Sent", { exact: true }).count()).toBeGreaterThan(0);
    await expectAccessible(page);
    await screenshot(page, "referral-sent");

    // The e-mail with the PDF is in the mailbox page.
    const [mail] = await mailTo("l.ferreira-holt@brackenford-eye.test");
    expect(mail!.subject).toMatch(/^Referral REF-\d{5} \(/);
    await page.goto(`/dev/mailbox?id=${mail!.id}`);
    await poll(() => page.getByRole("heading", { level: 2 }).first().textContent()).toBe(mail!.subject);
    await poll(() => page.getByRole("link", { name: /^referral-REF-\d{5}\.pdf$/ }).count()).toBe(1);
    const href = await page.getByRole("link", { name: /\/r\/[\w-]+\.[\w-]+/ }).getAttribute("href");
    expect(href).toBeTruthy();
    await screenshot(page, "referral-mailbox");

    // The ophthalmologist opens the link (no account), acknowledges and replies.
    const surgeon = await browser.newPage({ viewport: { width: 1024, height: 1000 } });
    await surgeon.goto(href!);
    await poll(() => surgeon.getByRole("heading", { level: 1 }).textContent()).toMatch(/^Referral REF-\d{5}$/);
    await poll(() => surgeon.getByText(`${candidate.name}, born`).count()).toBe(1);
    await expectAccessible(surgeon);
    await screenshot(surgeon, "referral-recipient");
    const ack = surgeon.locator("form").filter({ has: surgeon.getByRole("button", { name: "Acknowledge receipt" }) });
    await ack.getByLabel("Your name").fill("Mr Lucan Ferreira-Holt");
    await ack.getByRole("button", { name: "Acknowledge receipt" }).click();
    await poll(() => surgeon.getByText("Thank you: receipt acknowledged", { exact: false }).count()).toBe(1);
    // Acknowledged once: the form is gone, and the name given there carries into the reply (typed once).
    await poll(() => surgeon.getByRole("button", { name: "Acknowledge receipt" }).count()).toBe(0);
    const replyForm = surgeon.locator("form").filter({ has: surgeon.getByRole("button", { name: "Send reply" }) });
    await poll(() => replyForm.getByText("Responding as Mr Lucan Ferreira-Holt").count()).toBe(1);
    await replyForm
      .getByLabel("Short reply")
      .fill("Seen in the glaucoma clinic: pressures confirmed, fields booked. Will write in full.");
    await replyForm.getByRole("button", { name: "Send reply" }).click();
    await poll(() => surgeon.getByText("your reply has been sent to the practice").count()).toBe(1);
    await expectAccessible(surgeon);

    // A tampered link shows a clear page and nothing of the referral.
    const tampered = await browser.newPage();
    const res = await tampered.goto(`${href!.slice(0, -3)}xyz`);
    expect(res?.status()).toBe(404);
    await poll(() => tampered.getByRole("heading", { level: 1 }).textContent()).toBe("This link is not valid");
    expect(await tampered.content()).not.toContain(candidate.name);
    await expectAccessible(tampered);

    // The optometrist is told; the reply is in the patient's chart and on the referral.
    await poll(async () => (await mailTo(DEMO.optometrist)).some((m) => m.subject.includes("Reply received"))).toBe(
      true,
    );
    await page.goto(`/patients/${candidate.patient_id}`);
    await poll(() => page.getByText("Reply from Mr Lucan Ferreira-Holt", { exact: false }).count()).toBeGreaterThan(0);
    await poll(() => page.getByText("Seen in the glaucoma clinic", { exact: false }).count()).toBeGreaterThan(0);
    await expectAccessible(page);
    await page.goto(`/referrals/${referralId}`);
    await poll(() => page.getByText("Seen in the glaucoma clinic").count()).toBe(1);
    await poll(() => page.getByText("Reply received", { exact: true }).count()).toBeGreaterThan(0);
    await expectAccessible(page);
    await page.goto("/referrals?status=replied");
    await poll(() =>
      page
        .getByRole("row")
        .filter({ hasText: candidate.name.split(" ").reverse().join(", ") })
        .count(),
    ).toBeGreaterThan(0);
    await expectAccessible(page);
    await screenshot(page, "referrals-tracking");
    const { rows } = await client.query(
      "select body from referral_replies where referral_id = $1 and patient_id = $2",
      [referralId, candidate.patient_id],
    );
    expect(rows[0].body).toContain("Seen in the glaucoma clinic");
  }, 150_000); // the whole round trip (draft, PDF, SMTP, the recipient's reply) on a shared two-core machine

  it("lets the owner keep the recipients directory and the time frames", async () => {
    const page = await browser.newPage();
    await signIn(page, DEMO.owner);
    await page.waitForURL("**/");
    await page.goto("/settings/recipients");
    await expectAccessible(page);
    await page.getByRole("button", { name: "Add recipient" }).click();
    await poll(() => page.getByText("Give the ophthalmologist's or clinic's name.").count()).toBe(1);
    await page.getByLabel("Name", { exact: true }).fill("Dr Perpetua Lindqvist-Obi");
    await page.getByLabel("Clinic or hospital").fill("Fenmoor Eye Centre");
    await page.getByLabel("E-mail").fill("p.lindqvist-obi@fenmoor-eye.test");
    // Leave the field first: its error from the empty submit clears on blur and the button moves up.
    await page.getByLabel("E-mail").press("Tab");
    await page.getByRole("button", { name: "Add recipient" }).click();
    await poll(() => page.getByRole("cell", { name: "Dr Perpetua Lindqvist-Obi", exact: true }).count()).toBe(1);
    await page.getByLabel("Urgent (days)").fill("10");
    await page.getByRole("button", { name: "Save time frames" }).click();
    await poll(() => page.getByText("Referral time frames saved").count()).toBeGreaterThan(0);
    await poll(() => page.getByLabel("Urgent (days)").inputValue()).toBe("10");
    await expectAccessible(page);
    await screenshot(page, "referral-recipients");
    await page.getByLabel("Urgent (days)").fill("7");
    await page.getByRole("button", { name: "Save time frames" }).click();
    await poll(() => page.getByText("Referral time frames saved").count()).toBeGreaterThan(0);
  });

  it("shows the front desk statuses only", async () => {
    const page = await browser.newPage();
    await signIn(page, DEMO.receptionist);
    await page.waitForURL("**/");
    await page.goto("/referrals");
    await expectAccessible(page);
    expect(await page.getByRole("link", { name: "New referral" }).count()).toBe(0);
    // The referral sent in the first test is listed; its page shows the status and no clinical text.
    const first = page.getByRole("row").nth(1).getByRole("link").first();
    expect(await first.count()).toBe(1);
    await first.click();
    await poll(() => page.getByText("Status only").count()).toBe(1);
    expect(await page.content()).not.toMatch(/mmHg|blind spot/i);
    await expectAccessible(page);
    const res = await page.goto("/referrals/new");
    expect(res?.status()).toBe(403);
  });
});
