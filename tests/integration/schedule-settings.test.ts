import { eq } from "drizzle-orm";
import { describe, expect, it, onTestFinished } from "vitest";
import { action as typesAction } from "~/routes/settings/appointment-types";
import { action as hoursAction, loader as hoursLoader } from "~/routes/settings/hours";
import { appointmentTypes, practiceSettings, providerBreaks, workingHours } from "~/db/schema";
import { db } from "~/utils/db.server";
import { cookieFor, dataOf, makeRequest, run, statusOf, userByEmail } from "#tests/support/helpers";
import { newPatient, postBooking } from "./schedule-fixtures";

function post(path: string, cookie: string, pairs: [string, string][]) {
  return new Request(`http://127.0.0.1:3000${path}`, {
    method: "POST",
    headers: { cookie, "content-type": "application/x-www-form-urlencoded" },
    body: new URLSearchParams(pairs),
  });
}

describe("appointment types (owner)", () => {
  it("refuses bad input with errors by field, saves a good type, and is closed to the front desk", async () => {
    const owner = await cookieFor("owner");
    const bad = await run(
      typesAction,
      post("/settings/appointment-types", owner, [
        ["intent", "save"],
        ["name", ""],
        ["durationMinutes", "3"],
        ["recallMonths", "500"],
      ]),
    );
    expect(statusOf(bad)).toBe(400);
    const errors = dataOf<{ error: Record<string, string[]> }>(bad).error;
    expect(Object.keys(errors).sort()).toEqual(["durationMinutes", "name", "performerRoles", "recallMonths"]);
    const good = await run(
      typesAction,
      post("/settings/appointment-types", owner, [
        ["intent", "save"],
        ["name", "Dry eye review"],
        ["durationMinutes", "20"],
        ["recallMonths", "6"],
        ["performerRoles", "optometrist"],
        ["active", "on"],
      ]),
    );
    expect(statusOf(good)).toBe(302);
    const [row] = await db.select().from(appointmentTypes).where(eq(appointmentTypes.name, "Dry eye review"));
    expect(row).toMatchObject({
      durationMinutes: 20,
      recallMonths: 6,
      performerRoles: ["optometrist"],
      routineExam: false,
      onlineBooking: false,
      active: true,
    });
    // Opened to online booking from the portal.
    const online = await run(
      typesAction,
      post("/settings/appointment-types", owner, [
        ["intent", "save"],
        ["id", row!.id],
        ["name", "Dry eye review"],
        ["durationMinutes", "20"],
        ["recallMonths", "6"],
        ["performerRoles", "optometrist"],
        ["onlineBooking", "on"],
        ["active", "on"],
      ]),
    );
    expect(statusOf(online)).toBe(302);
    expect(
      (
        await db
          .select({ o: appointmentTypes.onlineBooking })
          .from(appointmentTypes)
          .where(eq(appointmentTypes.id, row!.id))
      )[0]?.o,
    ).toBe(true);
    // The owner is not among its performers any more: booking the owner for it is refused.
    const ownerUser = await userByEmail("owner@dioptra-demo.test");
    const p = await newPatient();
    const res = await postBooking({
      patientId: p.id,
      providerId: ownerUser.id,
      appointmentTypeId: row!.id,
      start: "2027-06-07T10:00:00+01:00",
    });
    expect(res.status).toBe(422);
    expect(
      statusOf(
        await run(
          typesAction,
          post("/settings/appointment-types", await cookieFor("receptionist"), [
            ["intent", "save"],
            ["name", "X"],
          ]),
        ),
      ),
    ).toBe(403);
  });

  it("sets the reminder time within 1–168 hours", async () => {
    const owner = await cookieFor("owner");
    expect(
      statusOf(
        await run(
          typesAction,
          post("/settings/appointment-types", owner, [
            ["intent", "reminder"],
            ["reminderHoursBefore", "0"],
          ]),
        ),
      ),
    ).toBe(400);
    expect(
      statusOf(
        await run(
          typesAction,
          post("/settings/appointment-types", owner, [
            ["intent", "reminder"],
            ["reminderHoursBefore", "48"],
          ]),
        ),
      ),
    ).toBe(302);
    const [s] = await db.select({ h: practiceSettings.reminderHoursBefore }).from(practiceSettings);
    expect(s!.h).toBe(48);
    await db.update(practiceSettings).set({ reminderHoursBefore: 24 });
  });
});

describe("working hours (owner)", () => {
  it("refuses an end before the start and a break outside the day, then saves a new week that bookings follow", async () => {
    const owner = await cookieFor("owner");
    const ownerUser = await userByEmail("owner@dioptra-demo.test");
    // Other test files may book the owner: put the demo week back afterwards.
    const keepHours = await db.select().from(workingHours).where(eq(workingHours.providerId, ownerUser.id));
    const keepBreaks = await db.select().from(providerBreaks).where(eq(providerBreaks.providerId, ownerUser.id));
    onTestFinished(async () => {
      await db.delete(workingHours).where(eq(workingHours.providerId, ownerUser.id));
      await db.delete(providerBreaks).where(eq(providerBreaks.providerId, ownerUser.id));
      await db.insert(workingHours).values(keepHours);
      await db.insert(providerBreaks).values(keepBreaks);
    });
    const page = dataOf<{ days: { weekday: number; start: string; end: string }[] }>(
      await run(hoursLoader, makeRequest(`/settings/hours?provider=${ownerUser.id}`, { cookie: owner })),
    );
    expect(page.days[0]).toMatchObject({ weekday: 1, start: "09:00", end: "17:30" });
    const bad = await run(
      hoursAction,
      post("/settings/hours", owner, [
        ["providerId", ownerUser.id],
        ["start-1", "17:00"],
        ["end-1", "09:00"],
        ["start-2", "09:00"],
        ["end-2", "12:00"],
        ["breakStart-2", "12:30"],
        ["breakEnd-2", "13:00"],
      ]),
    );
    expect(statusOf(bad)).toBe(400);
    expect(Object.keys(dataOf<{ errors: Record<string, string[]> }>(bad).errors).sort()).toEqual([
      "break-2",
      "hours-1",
    ]);
    // Nothing was written by the refused form.
    expect(await db.select().from(workingHours).where(eq(workingHours.providerId, ownerUser.id))).toHaveLength(5);
    // Mondays only, 12:00–18:00, break 15:00–15:30.
    const ok = await run(
      hoursAction,
      post("/settings/hours", owner, [
        ["providerId", ownerUser.id],
        ["start-1", "12:00"],
        ["end-1", "18:00"],
        ["breakStart-1", "15:00"],
        ["breakEnd-1", "15:30"],
        ["breakLabel-1", "Admin"],
      ]),
    );
    expect(statusOf(ok)).toBe(302);
    expect(await db.select().from(workingHours).where(eq(workingHours.providerId, ownerUser.id))).toHaveLength(1);
    expect(await db.select().from(providerBreaks).where(eq(providerBreaks.providerId, ownerUser.id))).toHaveLength(1);
    const [exam] = await db.select().from(appointmentTypes).where(eq(appointmentTypes.name, "Comprehensive eye exam"));
    const p = await newPatient();
    const book = (start: string) =>
      postBooking({ patientId: p.id, providerId: ownerUser.id, appointmentTypeId: exam!.id, start });
    expect((await book("2027-06-07T10:00:00+01:00")).status).toBe(422); // Monday morning: now closed
    const tuesday = await book("2027-06-08T13:00:00+01:00");
    expect(await tuesday.json()).toMatchObject({ error: "The provider does not work on Tuesdays." });
    expect((await (await book("2027-06-07T15:10:00+01:00")).json()) as { error: string }).toMatchObject({
      error: expect.stringContaining("admin (15:00–15:30)"),
    });
    expect((await book("2027-06-07T12:00:00+01:00")).status).toBe(201);
  });
});
