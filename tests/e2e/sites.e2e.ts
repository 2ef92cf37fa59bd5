import { describe, expect, it } from "vitest";
import { addDays, localParts, startOfWeek } from "~/lib/scheduling/time";
import { DEMO, expectAccessible, screenshot, signIn, useBrowser } from "./fixtures";

const browser = useBrowser();

describe("sites in the browser", () => {
  it("the owner keeps the sites (by keyboard, refused with a message when wrong); the calendar, day list and takings filter by site; the patient chooses a site in the portal", async () => {
    const owner = await browser.newPage({ viewport: { width: 1300, height: 1400 } });
    await signIn(owner, DEMO.owner);
    await owner.waitForURL((u) => u.pathname === "/");
    await owner.goto("/settings/sites");
    await owner.getByRole("heading", { name: "Sites", exact: true }).waitFor();
    expect(await owner.getByRole("list", { name: "The practice's sites" }).getByRole("listitem").count()).toBe(2);
    await expectAccessible(owner);
    // Hillcrest Parade: closing it while the optometrist works there on Thursdays is refused.
    await owner.getByRole("link", { name: "Hillcrest Parade" }).click();
    await owner.getByRole("heading", { name: "Site: Hillcrest Parade" }).waitFor();
    await owner.getByLabel("Open (can be booked)").uncheck();
    await owner.getByLabel("Add a room").fill("Field room");
    await owner.getByLabel("Add a room").press("Enter");
    await owner.getByText(/works here on Thursdays/).waitFor();
    await expectAccessible(owner);
    await screenshot(owner, "sites-refused");
    // Keep it open; the room is added.
    await owner.getByLabel("Open (can be booked)").check();
    await owner.getByLabel("Add a room").fill("Field room");
    await owner.getByRole("button", { name: "Save site" }).click();
    await owner.getByRole("textbox", { name: "Room name" }).nth(1).waitFor();
    expect(await owner.getByRole("textbox", { name: "Room name" }).count()).toBe(2);

    // The front desk filters the calendar by site; the day list opens on the same choice.
    const desk = await browser.newPage({ viewport: { width: 1400, height: 1600 } });
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL((u) => u.pathname === "/");
    const monday = startOfWeek(addDays(localParts(new Date(), "Europe/London").date, 7));
    await desk.goto(`/schedule?date=${monday}`);
    await desk.locator(".fc-timegrid-slot-lane").first().waitFor();
    await desk.getByLabel("Site").selectOption({ label: "Hillcrest Parade" });
    await desk.waitForURL((u) => u.searchParams.get("site") !== null);
    await desk.locator(".fc-timegrid-slot-lane").first().waitFor();
    await expectAccessible(desk);
    await desk.goto("/schedule/day");
    expect(await desk.getByLabel("Site").locator("option:checked").textContent()).toBe("Hillcrest Parade");
    await expectAccessible(desk);
    await screenshot(desk, "day-list-site");

    // Takings filter by site too (the invoice's site).
    await desk.goto("/billing/takings");
    await desk.getByLabel("Site").selectOption({ label: "Hillcrest Parade" });
    await desk.getByRole("button", { name: "Show day" }).click();
    await desk.waitForURL((u) => u.pathname === "/billing/takings" && u.searchParams.get("site") !== null);
    expect(await desk.getByLabel("Site").locator("option:checked").textContent()).toBe("Hillcrest Parade");
    await expectAccessible(desk);
    await screenshot(desk, "takings-site");

    // The patient chooses where to book in the portal; the free times offered are for that site.
    const patient = await browser.newPage({ viewport: { width: 1000, height: 1400 } });
    await signIn(patient, DEMO.patient);
    await patient.waitForURL((u) => u.pathname.startsWith("/portal"));
    await patient.goto("/portal/book");
    const where = patient.getByLabel("Where");
    expect(await where.locator("option").allTextContents()).toEqual(["Larkspur Lane", "Hillcrest Parade"]);
    await where.selectOption({ label: "Hillcrest Parade" });
    await patient.getByLabel("Day").fill(addDays(monday, 3)); // a Thursday, Hillcrest's day
    await patient.getByRole("button", { name: "Show free times" }).click();
    await patient.waitForURL((u) => u.searchParams.get("site") !== null);
    expect(await patient.getByLabel("Where").locator("option:checked").textContent()).toBe("Hillcrest Parade");
    const hillId = await patient.getByLabel("Where").inputValue();
    const offered = patient.locator('form[method="post"] input[name="siteId"]');
    expect(await offered.count()).toBeGreaterThan(0);
    // Every time offered, once the page has settled on the chosen site, is at that site.
    await expect
      .poll(async () => [...new Set(await offered.evaluateAll((els) => els.map((e) => (e as HTMLInputElement).value)))])
      .toEqual([hillId]);
    await expectAccessible(patient);
  }, 180_000);
});
