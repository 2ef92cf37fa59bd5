import type { Page } from "playwright-core";
import { beforeAll, describe, expect, it } from "vitest";
import { addDays, localParts, startOfWeek, wallTimeToInstant } from "~/lib/scheduling/time";
import { DEMO, expectAccessible, screenshot, signIn, testDb, useBrowser } from "./fixtures";

const browser = useBrowser();
const ZONE = "Europe/London";
const tag = Math.random().toString(36).slice(2, 7);
// A Tuesday five weeks ahead: in the future whatever today is, and clear of the other files' weeks.
const today = localParts(new Date(), ZONE).date;
const DAY = addDays(startOfWeek(addDays(today, 35)), 1);

const q = async <T extends object>(text: string, values: unknown[] = []) =>
  (await testDb().query(text, values)).rows as T[];

const names = {
  short: `Ada Quill${tag}`,
  long: `Bartholomew-Maximilian Featherstonehaugh${tag}`,
  collect: `Cora Vell${tag}`,
  fitting: `Dunstan Pike${tag}`,
  drag: `Esme Rook${tag}`,
  todayVisit: `Fenella Tarn${tag}`,
};
const ids = {} as Record<keyof typeof names, string>;

async function insertAppointment(
  key: keyof typeof names,
  patient: string,
  provider: "owner" | "optometrist",
  type: string,
  date: string,
  minute: number,
  status = "booked",
) {
  const [first, ...rest] = patient.split(" ");
  const [p] = await q<{ id: string }>(
    "insert into patients (first_name, last_name, date_of_birth) values ($1, $2, date '1980-05-05') returning id",
    [first, rest.join(" ")],
  );
  const [t] = await q<{ id: string; duration_minutes: number }>(
    "select id, duration_minutes from appointment_types where name = $1",
    [type],
  );
  const email = provider === "owner" ? DEMO.owner : DEMO.optometrist;
  const [u] = await q<{ id: string }>("select id from users where email = $1", [email]);
  const start = wallTimeToInstant(date, minute, ZONE)!;
  const end = new Date(start.getTime() + t!.duration_minutes * 60_000);
  const [a] = await q<{ id: string }>(
    `insert into appointments (patient_id, provider_id, appointment_type_id, starts_at, ends_at, status)
     values ($1, $2, $3, $4, $5, $6) returning id`,
    [p!.id, u!.id, t!.id, start, end, status],
  );
  await q("insert into appointment_status_changes (appointment_id, to_status) values ($1, $2)", [a!.id, status]);
  ids[key] = a!.id;
}

async function statusOf(id: string) {
  const [row] = await q<{ status: string }>("select status::text from appointments where id = $1", [id]);
  return row!.status;
}

async function openWeek(page: Page) {
  await page.goto(`/schedule?date=${DAY}&provider=all&view=timeGridWeek`);
  await page.locator(`[data-appointment-id="${ids.short}"]`).waitFor();
}

beforeAll(async () => {
  await insertAppointment("short", names.short, "optometrist", "Contact lens check", DAY, 10 * 60);
  await insertAppointment("long", names.long, "optometrist", "Comprehensive eye exam", DAY, 10 * 60 + 20, "confirmed");
  await insertAppointment("collect", names.collect, "optometrist", "Spectacle collection", DAY, 11 * 60);
  await insertAppointment("fitting", names.fitting, "owner", "Contact lens fitting", DAY, 10 * 60);
  await insertAppointment("drag", names.drag, "owner", "Comprehensive eye exam", DAY, 16 * 60);
  // Early in today's list, so the Today card (first eight) shows it.
  await insertAppointment("todayVisit", names.todayVisit, "optometrist", "Spectacle collection", today, 6 * 60 + 5);
});

describe("the calendar fits its text, colours by type and has a column per clinician", () => {
  it("puts the patient first in a 20-minute visit, cuts long lines with an ellipsis, colours types with a key, and shows statuses in words", async () => {
    const desk = await browser.newPage({ viewport: { width: 1400, height: 1000 } });
    await signIn(desk, DEMO.receptionist);
    await openWeek(desk);
    await expectAccessible(desk);

    // The 20-minute visit: the patient's name is its first line, whole inside the event's box.
    const short = desk.locator(`[data-appointment-id="${ids.short}"]`);
    const name = short.locator(".appt-name");
    expect(await name.textContent()).toBe(names.short);
    const box = (await short.boundingBox())!;
    const nameBox = (await name.boundingBox())!;
    expect(nameBox.y).toBeGreaterThanOrEqual(box.y - 1);
    expect(nameBox.y + nameBox.height).toBeLessThanOrEqual(box.y + box.height + 1);
    // Nothing spills out of the box: every line of the event ends inside it.
    const lines = await short.locator(".appt-body > div").evaluateAll((els) =>
      els.map((e) => {
        const r = e.getBoundingClientRect();
        return { bottom: r.bottom, ellipsis: getComputedStyle(e).textOverflow, overflow: getComputedStyle(e).overflow };
      }),
    );
    expect(lines.length).toBe(2);
    for (const l of lines) {
      expect(l.bottom).toBeLessThanOrEqual(box.y + box.height + 1);
      expect(l).toMatchObject({ ellipsis: "ellipsis", overflow: "hidden" });
    }
    expect(await short.textContent()).toContain("Booked");
    expect(await short.getAttribute("title")).toMatch(
      new RegExp(`${names.short}, 10:00.*Contact lens check with Tobias Wren, Booked`),
    );

    // A name too long for the column is cut with an ellipsis; the whole of it is in the label and tooltip.
    const long = desk.locator(`[data-appointment-id="${ids.long}"]`);
    const cut = await long.locator(".appt-name").evaluate((e) => e.scrollWidth > e.clientWidth);
    expect(cut).toBe(true);
    expect(await long.getAttribute("aria-label")).toContain(names.long);
    expect(await long.textContent()).toContain("Confirmed");

    // Types have colours of their own, and the key says which is which.
    const fill = (id: string) =>
      desk.locator(`[data-appointment-id="${id}"]`).evaluate((e) => getComputedStyle(e).backgroundColor);
    const colours = new Set([await fill(ids.short), await fill(ids.long), await fill(ids.collect)]);
    expect(colours.size).toBe(3);
    const key = desk.getByRole("list", { name: "Appointment types" });
    const swatch = key.getByRole("listitem").filter({ hasText: "Contact lens check" }).locator("span").first();
    expect(await swatch.evaluate((e) => getComputedStyle(e).backgroundColor)).toBe(await fill(ids.short));
    expect(await desk.getByRole("list", { name: "Statuses" }).textContent()).toContain("Arrived");
    await screenshot(desk, "calendar-week");

    // The day by clinician: one column each, each holding only that clinician's visits.
    await desk.getByRole("link", { name: "Day by clinician" }).click();
    const wren = desk.getByRole("region", { name: "Tobias Wren's day" });
    const castellane = desk.getByRole("region", { name: "Imogen Castellane's day" });
    await wren.locator(`[data-appointment-id="${ids.short}"]`).waitFor();
    await castellane.locator(`[data-appointment-id="${ids.fitting}"]`).waitFor();
    expect(await wren.locator(`[data-appointment-id="${ids.fitting}"]`).count()).toBe(0);
    expect(await castellane.locator(`[data-appointment-id="${ids.short}"]`).count()).toBe(0);
    const wrenBox = (await wren.boundingBox())!;
    const castellaneBox = (await castellane.boundingBox())!;
    // Side by side: the same top, different columns.
    expect(Math.abs(wrenBox.y - castellaneBox.y)).toBeLessThan(2);
    expect(Math.abs(wrenBox.x - castellaneBox.x)).toBeGreaterThan(100);
    await expectAccessible(desk);
    await screenshot(desk, "calendar-day-by-clinician");
  });
});

describe("status changes ask before another day, undo is worded and placed apart, Today's rows act", () => {
  it("asks before marking an arrival on another day; the server refuses without the confirmation; the undo says what it undoes and sits away from the pointer", async () => {
    const desk = await browser.newPage({ viewport: { width: 1400, height: 1000 } });
    await signIn(desk, DEMO.receptionist);
    // The API refuses an arrival on another day without the flag, with the reason.
    const refused = await desk.request.patch(`/api/appointments/${ids.collect}`, {
      data: { status: "arrived" },
      headers: { accept: "application/json" },
    });
    expect(refused.status()).toBe(409);
    expect(((await refused.json()) as { error: string }).error).toMatch(
      /not today .*Confirm that you mean to mark it arrived/,
    );
    expect(await statusOf(ids.collect)).toBe("booked");

    await desk.goto(`/schedule/day?date=${DAY}&provider=all`);
    await expectAccessible(desk);
    const mark = desk.getByRole("button", { name: `Mark arrived for ${names.short}` });
    const markBox = (await mark.boundingBox())!;
    const pointer = { x: markBox.x + markBox.width / 2, y: markBox.y + markBox.height / 2 };
    await desk.mouse.click(pointer.x, pointer.y);
    const ask = desk.getByRole("dialog", { name: "Not today's appointment" });
    await ask.waitFor();
    expect(await ask.textContent()).toContain("not today");
    await expectAccessible(desk);
    // Nothing changes until the yes.
    expect(await statusOf(ids.short)).toBe("booked");
    await ask.getByRole("button", { name: /^Yes, mark arrived/ }).click();
    await expect.poll(() => statusOf(ids.short)).toBe("arrived");
    const row = desk.locator(`tr[data-appointment-id="${ids.short}"]`);
    await expect.poll(() => row.textContent()).toContain("Arrived");
    // The undo is called an undo, and is not where the pointer was.
    expect(await row.getByRole("button", { name: /^Mark confirmed/ }).count()).toBe(0);
    const undo = row.getByRole("button", { name: `Undo arrival for ${names.short}` });
    const undoBox = (await undo.boundingBox())!;
    const under =
      pointer.x >= undoBox.x &&
      pointer.x <= undoBox.x + undoBox.width &&
      pointer.y >= undoBox.y &&
      pointer.y <= undoBox.y + undoBox.height;
    expect(under).toBe(false);
    expect(Math.hypot(undoBox.x - markBox.x, undoBox.y - markBox.y)).toBeGreaterThan(40);
    await expectAccessible(desk);
    // Undoing is not a day-of-visit step: it goes straight back, without asking.
    await undo.click();
    await expect.poll(() => statusOf(ids.short)).toBe("confirmed");
  });

  it("Today's rows can be opened and marked arrived", async () => {
    const desk = await browser.newPage({ viewport: { width: 1400, height: 1000 } });
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL((u) => u.pathname === "/");
    // The home page lists who is still to arrive today; marking one arrived moves them to "Waiting".
    const item = desk.getByTestId("home-arrivals").locator("li", { hasText: names.todayVisit });
    await item.waitFor();
    await expectAccessible(desk);
    await item.getByRole("button", { name: `Mark arrived for ${names.todayVisit}` }).click();
    await expect.poll(() => statusOf(ids.todayVisit)).toBe("arrived");
    const waiting = desk.getByTestId("home-waiting").locator("li", { hasText: names.todayVisit });
    await expect.poll(() => waiting.textContent()).toContain("Arrived");
    await waiting.getByRole("link", { name: new RegExp(names.todayVisit) }).click();
    await desk.waitForURL((u) => u.pathname === `/schedule/appointments/${ids.todayVisit}`);
    await expectAccessible(desk);
  });
});

describe("a drag shows its outcome in view, can be undone, and is in the history", () => {
  it("moves by dragging in a scrolled calendar, shows the notice on screen, undoes it, and lists both moves with who moved", async () => {
    // Short enough that the afternoon needs scrolling.
    const desk = await browser.newPage({ viewport: { width: 1400, height: 700 } });
    await signIn(desk, DEMO.receptionist);
    await openWeek(desk);
    const event = desk.locator(`[data-appointment-id="${ids.drag}"]`);
    await event.scrollIntoViewIfNeeded();
    expect(await desk.evaluate(() => window.scrollY)).toBeGreaterThan(200);
    const box = (await event.boundingBox())!;
    const slot = (await desk.locator(`td.fc-timegrid-slot-lane[data-time="16:00:00"]`).boundingBox())!;
    await desk.mouse.move(box.x + box.width / 2, box.y + 6);
    await desk.mouse.down();
    await desk.mouse.move(box.x + box.width / 2, box.y + 20, { steps: 4 });
    await desk.mouse.move(box.x + box.width / 2, box.y + 6 + slot.height * 2, { steps: 10 });
    await desk.mouse.up();
    const notice = desk.getByTestId("calendar-notice");
    await notice.waitFor();
    expect(await notice.textContent()).toMatch(new RegExp(`${names.drag} moved to .*16:30 \\(was .*16:00\\)`));
    // In view although the page is scrolled.
    const n = (await notice.boundingBox())!;
    expect(n.y).toBeGreaterThanOrEqual(0);
    expect(n.y + n.height).toBeLessThanOrEqual(700);
    const startOf = async () => {
      const [row] = await q<{ starts_at: Date }>("select starts_at from appointments where id = $1", [ids.drag]);
      return localParts(new Date(row!.starts_at), ZONE).minute;
    };
    expect(await startOf()).toBe(16 * 60 + 30);
    await expectAccessible(desk);
    await screenshot(desk, "calendar-moved-notice");

    await notice.getByRole("button", { name: "Undo move" }).click();
    await expect.poll(() => notice.textContent()).toContain(`Undone: ${names.drag} is back at`);
    expect(await startOf()).toBe(16 * 60);

    await desk.goto(`/schedule/appointments/${ids.drag}`);
    const history = desk.locator("ol").filter({ hasText: "Moved" });
    await expect.poll(() => history.textContent()).toMatch(/Moved .*16:00–16:30 → .*16:30–17:00 by Priya Oduya/);
    expect(await history.textContent()).toMatch(/Moved .*16:30–17:00 → .*16:00–16:30 by Priya Oduya/);
    await expectAccessible(desk);
  });
});

describe("booking an empty time by keyboard", () => {
  it("reaches the free times from the calendar by Tab and Enter and books one without the pointer", async () => {
    const desk = await browser.newPage({ viewport: { width: 1400, height: 1000 } });
    await signIn(desk, DEMO.receptionist);
    await openWeek(desk);
    await expectAccessible(desk);
    // Tab from the top of the page to "Book a time".
    let found = false;
    for (let i = 0; i < 40 && !found; i++) {
      await desk.keyboard.press("Tab");
      found = (await desk.evaluate(() => document.activeElement?.textContent?.trim())) === "Book a time";
    }
    expect(found).toBe(true);
    await desk.keyboard.press("Enter");
    await expect.poll(() => desk.evaluate(() => document.activeElement?.id)).toBe("free-title");
    // The next stops are the day's free times; Imogen Castellane's day starts free at 09:00.
    let label = "";
    for (let i = 0; i < 6 && !label.startsWith("Book from 09:00"); i++) {
      await desk.keyboard.press("Tab");
      label = (await desk.evaluate(() => document.activeElement?.textContent?.trim())) ?? "";
    }
    expect(label).toMatch(/^Book from 09:00 \(free until 10:00\) with Imogen Castellane$/);
    await desk.keyboard.press("Enter");
    const dialog = desk.getByRole("dialog", { name: "Book an appointment" });
    await dialog.waitFor();
    expect(await dialog.getByLabel("Starts").inputValue()).toBe(`${DAY}T09:00`);
    await expectAccessible(desk);
    // Find the patient by typing, choose them with the arrow keys and Enter, and send with Enter.
    await expect.poll(() => desk.evaluate(() => document.activeElement?.getAttribute("role"))).toBe("combobox");
    await desk.keyboard.type(names.collect);
    const surname = names.collect.split(" ")[1]!;
    await dialog.getByRole("option", { name: new RegExp(`${surname}, Cora`) }).waitFor();
    await desk.keyboard.press("ArrowDown");
    await desk.keyboard.press("Enter");
    expect(await dialog.getByTestId("chosen-patient").textContent()).toContain(`${surname}, Cora`);
    let onBook = false;
    for (let i = 0; i < 15 && !onBook; i++) {
      await desk.keyboard.press("Tab");
      onBook = (await desk.evaluate(() => document.activeElement?.textContent?.trim())) === "Book appointment";
    }
    expect(onBook).toBe(true);
    await desk.keyboard.press("Enter");
    await expect.poll(() => desk.getByTestId("toast").textContent()).toContain("Appointment booked");
    const [booked] = await q<{ starts_at: Date; name: string }>(
      `select a.starts_at, u.name from appointments a join patients p on p.id = a.patient_id join users u on u.id = a.provider_id
        where p.last_name = $1 and a.starts_at < $2 order by a.starts_at`,
      [names.collect.split(" ")[1], wallTimeToInstant(DAY, 10 * 60, ZONE)],
    );
    expect(booked?.name).toBe("Imogen Castellane");
    expect(localParts(new Date(booked!.starts_at), ZONE)).toMatchObject({ date: DAY, minute: 9 * 60 });
  });
});
