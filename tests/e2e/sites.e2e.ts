import { describe, expect, it } from "vitest";
import { addDays, localParts, startOfWeek } from "~/lib/scheduling/time";
import { DEMO, expectAccessible, screenshot, signIn, useBrowser } from "./fixtures";

const browser = useBrowser();

describe("sites in the browser", () => {
  it("the owner keeps the sites (by keyboard, refused with a message when wrong); the calendar and day list filter by site and remember it", async () => {
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
  }, 120_000);
});
