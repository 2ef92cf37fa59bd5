/**
 * Contact lenses in the browser: the owner's lens catalogue, a toric lens fitted in the exam's
 * contact-lens fitting section, and its prescription issued only in the lens's steps (an axis
 * off the lens's 10° step is refused with the reason, the on-step one is issued), with the
 * prescription PDF's text read back.
 */
import { execFileSync } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import type { Page } from "playwright-core";
import { describe, expect, it } from "vitest";
import { DEMO, expectAccessible, signIn, testDb, useBrowser } from "./fixtures";

const browser = useBrowser();
const poll = <T>(fn: () => T | Promise<T>) => expect.poll(fn, { timeout: 30_000 });
const tag = Date.now().toString(36);
const status = (page: Page, section: string) => page.locator(`[data-section-status="${section}"]`);
const saved = (page: Page, section: string) =>
  poll(() => status(page, section).textContent()).toMatch(/Saved \d\d:\d\d/);

async function q<T>(sql: string, params: unknown[] = []) {
  return (await testDb().query(sql, params)).rows as T[];
}

function pdfText(bytes: Buffer) {
  const dir = mkdtempSync(join(tmpdir(), "cl-e2e-"));
  writeFileSync(join(dir, "rx.pdf"), bytes);
  return execFileSync("pdftotext", ["-layout", join(dir, "rx.pdf"), "-"]).toString();
}

describe("contact lenses", () => {
  it("lets the owner add a lens to the catalogue, refusing a list typed with decimal commas", async () => {
    const page = await browser.newPage();
    await signIn(page, DEMO.owner);
    await page.goto("/settings/contact-lenses");
    await page.waitForLoadState("networkidle");
    await expectAccessible(page);
    // The demo catalogue (fictional lenses).
    expect(await page.getByText("Northmere Lens Co. Aquilo Daily Toric").count()).toBe(1);

    const fill = async (base: string) => {
      await page.getByLabel("Manufacturer").fill("Testbury Optics");
      await page.getByLabel("Lens name").fill(`Meridian Toric ${tag}`);
      await page.getByLabel("Material").fill("Silicone hydrogel");
      await page.getByLabel("Base curves (mm)").fill(base);
      await page.getByLabel("Diameters (mm)").fill("14.5");
      await page.getByLabel("Lowest sphere (D)").fill("-6");
      await page.getByLabel("Highest sphere (D)").fill("+4");
      await page.getByLabel("Sphere step (D)").fill("0.25");
      await page.getByLabel("Toric cylinders (D)").fill("-0.75, -1.25");
      await page.getByLabel("Axis step (°), toric only").fill("5");
      await page.getByLabel("Replacement").selectOption("monthly");
      await page.getByRole("button", { name: "Add lens" }).click();
      await page.waitForLoadState("networkidle");
    };
    await fill("8,6");
    await poll(() => page.getByText(/use a decimal point, not a comma/).count()).toBe(1);
    await expectAccessible(page);
    expect(await q("select 1 from contact_lenses where name = $1", [`Meridian Toric ${tag}`])).toHaveLength(0);
    await fill("8.6");
    await poll(() => page.getByRole("table").getByText(`Testbury Optics Meridian Toric ${tag}`).count()).toBe(1);
    const [row] = await q<{ cylinders: number[]; axis_step: number }>(
      "select cylinders, axis_step from contact_lenses where name = $1",
      [`Meridian Toric ${tag}`],
    );
    expect(row).toEqual({ cylinders: [-1.25, -0.75], axis_step: 5 });

    // Withdrawn from new fittings, then offered again: the row says so in words, not only colour.
    const lensRow = page.getByRole("row").filter({ hasText: `Testbury Optics Meridian Toric ${tag}` });
    await lensRow.getByRole("button", { name: /^Withdraw/ }).click();
    await poll(() => page.getByTestId("toast").textContent()).toContain("withdrawn from new fittings");
    await poll(() => lensRow.getByText("Withdrawn", { exact: true }).count()).toBe(1);
    expect(
      await q("select 1 from contact_lenses where name = $1 and not active", [`Meridian Toric ${tag}`]),
    ).toHaveLength(1);
    await expectAccessible(page);
    await lensRow.getByRole("button", { name: /^Offer again/ }).focus();
    await page.keyboard.press("Enter");
    await poll(() => lensRow.getByText("Withdrawn", { exact: true }).count()).toBe(0);
    expect(await q("select 1 from contact_lenses where name = $1 and active", [`Meridian Toric ${tag}`])).toHaveLength(
      1,
    );
    await expectAccessible(page);
    await page.close();
  }, 180_000);

  it("saves the aftercare section and shows its values after a reload", async () => {
    const [patient] = await q<{ id: string }>(
      "insert into patients (first_name, last_name, date_of_birth) values ('Perpetua', $1, date '1979-11-21') returning id",
      [`Lindqvist${tag}`],
    );
    const [exam] = await q<{ id: string }>(
      "insert into exams (patient_id, optometrist_id) select $1, id from users where email = $2 returning id",
      [patient!.id, DEMO.optometrist],
    );
    const page = await browser.newPage();
    await signIn(page, DEMO.optometrist);
    await page.goto(`/patients/${patient!.id}/exams/${exam!.id}`);
    await page.waitForLoadState("networkidle");
    const aftercare = page.locator("#section-cl-aftercare");
    const typed: [string, string][] = [
      ["Right manufacturer", "Testbury Optics"],
      ["Right lens name", "Clearday Sphere"],
      ["Right base curve (mm)", "8.6"],
      ["Right diameter (mm)", "14.2"],
      ["Right lens power", "-2.50"],
      ["Right conjunctival (bulbar) redness", "1.5"],
      ["Usual wearing time (hours a day)", "10"],
      ["Days a week worn", "6"],
    ];
    for (const [label, value] of typed) await aftercare.getByLabel(label, { exact: true }).fill(value);
    await aftercare.getByLabel("Care system").selectOption({ label: "Multipurpose solution" });
    await aftercare.getByLabel("Advice given").fill("Rub and rinse the lenses; replace the case monthly.");
    await aftercare.getByLabel("Advice given").press("Tab");
    await saved(page, "cl_aftercare");
    await expectAccessible(page);
    const [row] = await q<{ n: number }>(
      "select count(*)::int as n from exam_contact_lens where exam_id = $1 and section = 'cl_aftercare'",
      [exam!.id],
    );
    expect(row!.n).toBe(1);

    await page.reload();
    await page.waitForLoadState("networkidle");
    for (const [label, value] of typed) {
      const shown = await aftercare.getByLabel(label, { exact: true }).inputValue();
      // Numbers may come back in the section's own format (8.60 for 8.6); text comes back as typed.
      if (Number.isFinite(Number(value))) expect(Number(shown), label).toBe(Number(value));
      else expect(shown, label).toBe(value);
    }
    expect(await aftercare.getByLabel("Care system").inputValue()).toBe("multipurpose");
    expect(await aftercare.getByLabel("Advice given").inputValue()).toBe(
      "Rub and rinse the lenses; replace the case monthly.",
    );
    await saved(page, "cl_aftercare");
    await expectAccessible(page);
    await page.close();
  }, 120_000);

  it("fits a toric lens and issues its prescription only in the lens's steps", async () => {
    const [patient] = await q<{ id: string }>(
      "insert into patients (first_name, last_name, date_of_birth) values ('Ottoline', $1, date '1984-03-09') returning id",
      [`Fairweather${tag}`],
    );
    const page = await browser.newPage({ viewport: { width: 1280, height: 900 } });
    await signIn(page, DEMO.optometrist);
    await page.goto(`/patients/${patient!.id}`);
    await page.getByRole("button", { name: "Start a new exam" }).click();
    await page.waitForURL(/\/exams\/[0-9a-f-]{36}$/);

    await page.getByLabel("Right final sphere, cylinder and axis", { exact: true }).fill("-4.00 -1.25 x 180");
    await saved(page, "refraction:final");

    await page
      .getByLabel("Right lens fitted (catalogue)")
      .selectOption({ label: "Northmere Lens Co. Aquilo Daily Toric (toric)" });
    await page.getByLabel("Right base curve (mm)").first().fill("8.60");
    await page.getByLabel("Right diameter (mm)").first().fill("14.5");
    await page.getByLabel("Right lens power").first().fill("-3.75 -1.25 x 180");
    await page.getByLabel("Right toric rotation (°)").first().fill("5");
    await page.getByLabel("Right rotation direction").first().selectOption("clockwise");
    await page.getByLabel("Right conjunctival (bulbar) redness").first().fill("1.5");
    await page.getByLabel("Care system").first().selectOption("none_daily");
    await saved(page, "cl_fitting");
    // The spectacle refraction at the cornea, as a guide: the −4.00 and −5.25 D meridians at 12 mm
    // become −3.82 and −4.94 D by F/(1 − dF) (effective-power formula; medicalalgorithms.com,
    // "required power for a contact lens using the back vertex distance").
    expect(await page.getByTestId("vertex-guide").textContent()).toMatch(/-3\.82 -1\.12 x 180 at the cornea/);
    await expectAccessible(page);

    await page.getByRole("button", { name: "Sign exam" }).click();
    await poll(() => page.getByText(/^Signed by Tobias Wren/).count()).toBe(1);

    await page.getByRole("radio", { name: "Contact lenses" }).check();
    const power = page.getByLabel("Right power", { exact: true });
    expect(await power.inputValue()).toBe("-3.75 -1.25 x 180");
    // Contact-lens cautions appear with a contact-lens prescription only.
    expect(await page.getByTestId("rx-cautions").textContent()).toMatch(/tap water/);
    expect(await page.getByTestId("rx-right-guide").textContent()).toMatch(/Guide only, not for ordering/);

    // Off the lens's 10° axis step: refused with the reason, nothing issued.
    await power.fill("-3.75 -1.25 x 175");
    // The field checks the step as the server does (the server's own refusal is covered by the integration
    // tests); the message names what is made, and nothing is issued.
    await power.press("Tab");
    await expect
      .poll(
        () =>
          page
            .getByText(
              "Right power: axis 175 is not made; Northmere Lens Co. Aquilo Daily Toric comes in 10° steps (nearest 170 or 180).",
            )
            .count(),
        { timeout: 60_000 },
      )
      .toBeGreaterThan(0);
    await page.getByRole("button", { name: "Issue prescription" }).click();
    expect(await q("select 1 from prescriptions where patient_id = $1", [patient!.id])).toHaveLength(0);
    await expectAccessible(page);

    await page.getByRole("radio", { name: "Contact lenses" }).check();
    await page.getByLabel("Right power", { exact: true }).fill("-3.75 -1.25 x 180");
    // Leaving the field re-checks it, which lifts the earlier refusal before the form is sent.
    await page.getByLabel("Right power", { exact: true }).press("Tab");
    await expect.poll(() => page.locator("#rx-right-power").getAttribute("aria-invalid")).toBeNull();
    await page.getByRole("button", { name: "Issue prescription" }).click();
    await poll(() => page.getByText("Contact-lens prescription issued").count()).toBeGreaterThan(0);
    await expectAccessible(page);

    const [rx] = await q<{ id: string }>("select id from prescriptions where patient_id = $1", [patient!.id]);
    const res = await page.request.get(`/patients/${patient!.id}/prescriptions/${rx!.id}/pdf`);
    expect(res.status()).toBe(200);
    const text = pdfText(await res.body());
    expect(text).toContain("Contact-lens prescription");
    expect(text).toContain("Aquilo Daily");
    // The lens column wraps; the row's figures are read in order after the eye.
    expect(text).toMatch(/Right[\s\S]*?8\.60\s+14\.5\s+\u22123\.75\s+\u22121\.25\s+180/);
    expect(text).toContain("Guide only, not for ordering");
    expect(text).toContain("GOC registration no.");
    expect(text).toMatch(/tap water/);
    await page.close();
  }, 300_000);
});
