import pg from "pg";
import { describe, expect, inject, it } from "vitest";
import { addDays, localParts, startOfWeek } from "~/lib/scheduling/time";
import { DEMO, expectAccessible, mailTo, screenshot, signIn, useBrowser } from "./fixtures";

const browser = useBrowser();

async function query<T>(sql: string, params: unknown[] = []): Promise<T[]> {
  const client = new pg.Client({ connectionString: inject("e2eDatabaseUrl") });
  await client.connect();
  try {
    return (await client.query(sql, params)).rows as T[];
  } finally {
    await client.end();
  }
}

describe("the schedule in the browser", () => {
  it("receptionist books in week view, drags to another day, marks arrived; the optometrist's list moves; the reminder reaches the mailbox with its .ics", async () => {
    // A week three weeks ahead, past the demo diary's booked fortnight, so the slots are free whatever today is.
    const monday = startOfWeek(addDays(localParts(new Date(), "Europe/London").date, 21));
    const tuesday = addDays(monday, 1);
    const wednesday = addDays(monday, 2);
    // The portal test switches this patient's e-mails off; this flow needs the default (on).
    await query("update patients set reminders_by_email = true where email = $1", [DEMO.patient]);

    // Tall enough that the whole working day is on screen for the drags.
    const desk = await browser.newPage({ viewport: { width: 1400, height: 1800 } });
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL((u) => u.pathname === "/");
    await desk.goto(`/schedule?date=${monday}`);
    await desk.locator(".fc-timegrid-slot-lane").first().waitFor();
    await expectAccessible(desk);

    // Select 10:00 on Tuesday by clicking the empty slot.
    const col = desk.locator(`td.fc-timegrid-col[data-date="${tuesday}"]`);
    const row = desk.locator(`td.fc-timegrid-slot-lane[data-time="10:00:00"]`);
    const colBox = (await col.boundingBox())!;
    const rowBox = (await row.boundingBox())!;
    await desk.mouse.click(colBox.x + colBox.width / 2, rowBox.y + rowBox.height / 2);
    const dialog = desk.getByRole("dialog", { name: "Book an appointment" });
    await dialog.waitFor();
    expect(await dialog.getByLabel("Starts").inputValue()).toBe(`${tuesday}T10:00`);
    await dialog.getByRole("combobox", { name: "Patient" }).fill("Achterberg");
    await dialog.getByRole("option", { name: /Achterberg, Rosalind/ }).click();
    await dialog.getByTestId("chosen-patient").waitFor();
    await dialog.getByLabel("Appointment type").selectOption({ label: "Comprehensive eye exam (30 min)" });
    await dialog.getByLabel("With").selectOption({ label: "Tobias Wren" });
    await expectAccessible(desk);
    await screenshot(desk, "schedule-booking-dialog");
    await dialog.getByRole("button", { name: "Book appointment" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent()).toContain("Appointment booked");

    const [appt] = await query<{ id: string; starts_at: Date }>(
      `select a.id, a.starts_at from appointments a join patients p on p.id = a.patient_id where p.last_name = 'Achterberg' and a.starts_at >= $1 order by a.created_at desc limit 1`,
      [new Date(`${monday}T00:00:00Z`)],
    );
    expect(localParts(new Date(appt!.starts_at), "Europe/London")).toMatchObject({ date: tuesday, minute: 600 });

    // Drag it from Tuesday to Wednesday, same time.
    const event = desk.locator(`[data-appointment-id="${appt!.id}"]`);
    await event.waitFor();
    await screenshot(desk, "schedule-week");
    const eventBox = (await event.boundingBox())!;
    const wedBox = (await desk.locator(`td.fc-timegrid-col[data-date="${wednesday}"]`).boundingBox())!;
    await desk.mouse.move(eventBox.x + eventBox.width / 2, eventBox.y + 8);
    await desk.mouse.down();
    await desk.mouse.move(eventBox.x + eventBox.width / 2 + 20, eventBox.y + 8, { steps: 4 });
    await desk.mouse.move(wedBox.x + wedBox.width / 2, eventBox.y + 8, { steps: 10 });
    await desk.mouse.up();
    await expect.poll(() => desk.getByTestId("calendar-notice").textContent()).toMatch(/moved to/);
    await expect
      .poll(async () => {
        const [row] = await query<{ starts_at: Date }>(`select starts_at from appointments where id = $1`, [appt!.id]);
        return localParts(new Date(row!.starts_at), "Europe/London");
      })
      .toMatchObject({ date: wednesday, minute: 600 });

    // A drag into the lunch break: the server refuses, the calendar puts the event back and says why.
    const moved = desk.locator(`[data-appointment-id="${appt!.id}"]`);
    await expect.poll(async () => (await moved.boundingBox())?.x ?? 0).toBeGreaterThan(wedBox.x - 1);
    const movedBox = (await moved.boundingBox())!;
    const lunch = (await desk.locator(`td.fc-timegrid-slot-lane[data-time="13:15:00"]`).boundingBox())!;
    await desk.mouse.move(movedBox.x + movedBox.width / 2, movedBox.y + 8);
    await desk.mouse.down();
    await desk.mouse.move(movedBox.x + movedBox.width / 2, movedBox.y + 30, { steps: 4 });
    await desk.mouse.move(movedBox.x + movedBox.width / 2, lunch.y + 4, { steps: 10 });
    await desk.mouse.up();
    await expect
      .poll(() => desk.getByTestId("calendar-notice").textContent())
      .toMatch(/Not moved: Overlaps the provider's lunch/);
    await expect.poll(async () => Math.round((await moved.boundingBox())!.y)).toBe(Math.round(movedBox.y));
    const [still] = await query<{ starts_at: Date }>(`select starts_at from appointments where id = $1`, [appt!.id]);
    expect(localParts(new Date(still!.starts_at), "Europe/London")).toMatchObject({ date: wednesday, minute: 600 });

    // The front desk sends the reminder now (it would otherwise go 24 hours before).
    await desk.goto(`/schedule/appointments/${appt!.id}`);
    await expectAccessible(desk);
    await desk.getByRole("button", { name: "Send the reminder now" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent()).toContain("Reminder on its way");
    await screenshot(desk, "schedule-appointment");

    // The optometrist's own day list, open before the patient arrives.
    const optom = await browser.newPage();
    await signIn(optom, DEMO.optometrist);
    await optom.waitForURL((u) => u.pathname === "/");
    await optom.goto(`/schedule/day?date=${wednesday}`);
    const optomRow = optom.locator(`tr[data-appointment-id="${appt!.id}"]`);
    await expect.poll(() => optomRow.textContent()).toContain("Booked");
    await expectAccessible(optom);

    // The front desk marks the patient arrived from the day list.
    await desk.goto(`/schedule/day?date=${wednesday}&provider=all`);
    await expectAccessible(desk);
    // Within this appointment's row: another file's flow may book the same patient that day.
    await desk
      .locator(`tr[data-appointment-id="${appt!.id}"]`)
      .getByRole("button", { name: "Mark arrived for Rosalind Achterberg" })
      .click();
    // The visit is not today's: the arrival is confirmed first.
    await desk
      .getByRole("dialog", { name: "Not today's appointment" })
      .getByRole("button", { name: /^Yes, mark arrived/ })
      .click();
    await expect.poll(() => desk.locator(`tr[data-appointment-id="${appt!.id}"]`).textContent()).toContain("Arrived");
    await screenshot(desk, "schedule-day-list");

    // Without a reload, the optometrist's list shows the arrival.
    await expect.poll(() => optomRow.textContent(), { timeout: 15_000 }).toContain("Arrived");
    await screenshot(optom, "schedule-optometrist-day");

    // Confirmation (on booking) and reminder reached the mailbox, each with an .ics.
    await expect
      .poll(async () => (await mailTo(DEMO.patient)).map((m) => m.subject).join("|"), { timeout: 15_000 })
      .toMatch(/Appointment booked/);
    await expect
      .poll(async () => (await mailTo(DEMO.patient)).map((m) => m.subject).join("|"), { timeout: 15_000 })
      .toMatch(/Reminder: your appointment/);
    await desk.goto("/schedule/messages");
    await expectAccessible(desk);
    await screenshot(desk, "schedule-email-log");
    await desk.goto("/dev/mailbox");
    await desk
      .getByRole("link", { name: /Reminder: your appointment/ })
      .first()
      .click();
    const attachment = desk.getByRole("link", { name: "appointment.ics" });
    await attachment.waitFor();
    const res = await desk.request.get((await attachment.getAttribute("href"))!);
    const ics = await res.text();
    expect(ics).toContain("BEGIN:VEVENT");
    expect(ics).toContain(`UID:appointment-${appt!.id}@dioptra`);
    await screenshot(desk, "schedule-mailbox-reminder");
  });

  it("shows the recall list and the owner's schedule settings, accessible", async () => {
    const desk = await browser.newPage();
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL((u) => u.pathname === "/");
    await desk.goto("/schedule/recalls");
    await expect.poll(() => desk.getByRole("heading", { level: 1 }).textContent()).toBe("Recalls");
    await expectAccessible(desk);
    // Bulk send to one demo patient who is due: the progress bar fills and the recall is e-mailed.
    await desk.getByRole("checkbox", { name: "Choose Osric Pellinore" }).check();
    await desk.getByRole("button", { name: "Send recall e-mails (1)" }).click();
    await expect
      .poll(() => desk.getByTestId("recall-progress").textContent(), { timeout: 20_000 })
      .toMatch(/1 of 1 done.*1 sent.*finished/);
    await expectAccessible(desk);
    await screenshot(desk, "schedule-recalls");
    await expect
      .poll(async () => (await mailTo("osric.pellinore@dioptra-demo.test")).map((m) => m.subject).join("|"))
      .toMatch(/Your eye examination is due/);
    const owner = await browser.newPage();
    await signIn(owner, DEMO.owner);
    await owner.waitForURL((u) => u.pathname === "/");
    for (const path of ["/settings/appointment-types", "/settings/hours"]) {
      await owner.goto(path);
      await expectAccessible(owner);
      await screenshot(owner, `settings-${path.split("/").pop()}`);
    }
    // A receptionist cannot reach them.
    const res = await desk.goto("/settings/hours");
    expect(res?.status()).toBe(403);
  });
});
