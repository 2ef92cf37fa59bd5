import { describe, expect, it } from "vitest";
import { DEMO, expectAccessible, screenshot, signIn, useBrowser } from "./fixtures";

const browser = useBrowser();

describe("Rx calculator", () => {
  it("computes live as the receptionist types, with inline errors and the caution", async () => {
    const page = await browser.newPage();
    await signIn(page, DEMO.receptionist);
    await page.waitForURL((u) => u.pathname === "/");
    await page.getByRole("navigation", { name: "Main" }).getByRole("link", { name: "Rx calculator" }).click();
    await page.waitForURL("**/tools/rx");
    await expect.poll(() => page.getByText("Check before ordering or prescribing").count()).toBe(1);

    const a = page.getByLabel("Prescription A", { exact: true });
    await a.fill("-10.00 DS");
    // Vertex conversion from 12 mm to the cornea: -10 / (1 - 0.012 × -10) = -8.929 D (common practice textbook example).
    await expect.poll(() => page.getByText("−8.929 DS").count()).toBe(1);
    await expect.poll(() => page.getByText("-9.00 DS").count()).toBeGreaterThan(0);

    // Transposition of -2.00 -1.00 x 180 is -3.00 +1.00 x 090; its spherical equivalent is -2.50 D (common practice).
    await a.fill("-2.00 -1.00 x 180");
    await expect.poll(() => page.getByText("-3.00 +1.00 x 090").count()).toBe(1);
    await expect.poll(() => page.getByText("−2.50 D").count()).toBeGreaterThan(0);

    // A typo: the field says what is wrong and where.
    await a.fill("-2.00 -1.00 x 181");
    await expect.poll(() => page.getByRole("alert").first().textContent()).toMatch(/181/);
    await a.fill("-2.00 -1.00 x 180");
    await expect.poll(() => page.getByRole("alert").count()).toBe(0);

    // Acuity: 6/12 is logMAR 0.30 and 20/40 (ICO 1984 visual acuity standard).
    const acuity = page.getByLabel("Acuity");
    await acuity.fill("6/12");
    await expect.poll(() => page.getByText("20/40").count()).toBeGreaterThan(0);

    // Dispensing: a sphere 0.50 D off is outside the ±0.13 D tolerance (ANSI Z80.1-2015).
    await page.getByLabel("Ordered", { exact: true }).fill("-2.00 DS");
    await page.getByLabel("Measured (lensmeter)").fill("-2.50 DS");
    await expect.poll(() => page.getByText("Fails — see the elements out of tolerance").count()).toBe(1);
    await page.getByLabel("Measured (lensmeter)").fill("-2.06 DS");
    await expect.poll(() => page.getByText("Passes — every element within tolerance").count()).toBe(1);

    await expectAccessible(page);
    await screenshot(page, "rx-tools");
  });

  it("is not open to patients", async () => {
    const page = await browser.newPage();
    await signIn(page, DEMO.patient);
    await page.waitForURL("**/portal");
    const res = await page.goto("/tools/rx");
    expect(res?.status()).toBe(403);
  });
});
