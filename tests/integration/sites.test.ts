import { and, eq, sql } from "drizzle-orm";
import { beforeAll, describe, expect, it } from "vitest";
import { loader as eventsLoader } from "~/routes/api/appointments";
import { loader as dayLoader } from "~/routes/schedule/day";
import { loader as calendarLoader } from "~/routes/schedule/index";
import { action as moveAction } from "~/routes/api/appointments-item";
import { freeSlots } from "~/models/portal/portal.server";
import { expandCalendarFeed, type CalendarFeed } from "~/lib/scheduling/calendar-feed";
import { action as hoursAction } from "~/routes/settings/hours";
import { action as sitesAction, loader as sitesLoader } from "~/routes/settings/sites";
import { appointments, rooms, siteOpeningHours, sites, workingHours } from "~/db/schema";
import { db } from "~/utils/db.server";
import { cookieFor, dataOf, makeRequest, run, statusOf } from "#tests/support/helpers";
import { demoIds, newPatient, postBooking } from "./schedule-fixtures";

let ids: Awaited<ReturnType<typeof demoIds>>;
let main: typeof sites.$inferSelect;
let hill: typeof sites.$inferSelect;
const room = async (siteId: string, name: string) =>
  (
    await db
      .select()
      .from(rooms)
      .where(and(eq(rooms.siteId, siteId), eq(rooms.name, name)))
  )[0]!;

beforeAll(async () => {
  ids = await demoIds();
  main = (await db.select().from(sites).where(eq(sites.isDefault, true)))[0]!;
  hill = (await db.select().from(sites).where(eq(sites.name, "Hillcrest Parade")))[0]!;
});

// 6 March 2028 is a Monday, 9 March a Thursday; both before the clocks change, so London time is UTC.
const MON = "2028-03-06";
const THU = "2028-03-09";
type Booked = { appointment: { id: string } };
const book = (body: Record<string, unknown>, role: "receptionist" | "owner" = "receptionist") =>
  postBooking({ providerId: ids.optometrist.id, appointmentTypeId: ids.examType.id, ...body }, role);

function post(path: string, cookie: string, entries: [string, string][]) {
  const body = new URLSearchParams(entries);
  return new Request(`http://127.0.0.1:3000${path}`, {
    method: "POST",
    headers: { cookie, "content-type": "application/x-www-form-urlencoded" },
    body,
  });
}

describe("sites: the demo practice", () => {
  it("has a default site and a part-time second site with opening hours and rooms", async () => {
    expect(main.name).toBe("Larkspur Lane");
    expect(hill.isDefault).toBe(false);
    const hillHours = await db.select().from(siteOpeningHours).where(eq(siteOpeningHours.siteId, hill.id));
    expect(hillHours.map((h) => h.weekday).sort()).toEqual([2, 4]); // Tuesdays and Thursdays
    expect(await db.select().from(rooms).where(eq(rooms.siteId, hill.id))).toHaveLength(1);
    const [thursday] = await db
      .select()
      .from(workingHours)
      .where(and(eq(workingHours.providerId, ids.optometrist.id), eq(workingHours.weekday, 4)));
    expect(thursday!.siteId).toBe(hill.id);
  });
});

describe("booking at a site", () => {
  it("books where the clinician works that day, in their room, without asking", async () => {
    const p = await newPatient();
    const mon = await book({ patientId: p.id, start: `${MON}T09:00:00Z` });
    expect(mon.status).toBe(201);
    const thu = await book({ patientId: p.id, start: `${THU}T09:00:00Z` });
    expect(thu.status).toBe(201);
    const [a] = await db
      .select()
      .from(appointments)
      .where(eq(appointments.id, ((await mon.json()) as Booked).appointment.id));
    const [b] = await db
      .select()
      .from(appointments)
      .where(eq(appointments.id, ((await thu.json()) as Booked).appointment.id));
    expect(a).toMatchObject({ siteId: main.id, roomId: (await room(main.id, "Room 2")).id });
    expect(b).toMatchObject({ siteId: hill.id, roomId: (await room(hill.id, "Consulting room")).id });
  });

  it("refuses a site where the clinician does not work that day, and a room that is not at the site, with a message", async () => {
    const p = await newPatient();
    const wrongSite = await book({ patientId: p.id, start: `${THU}T10:00:00Z`, siteId: main.id });
    expect(wrongSite.status).toBe(422);
    const body = (await wrongSite.json()) as { error: string; fieldErrors: Record<string, string[]> };
    expect(body.fieldErrors.siteId![0]).toMatch(/works at Hillcrest Parade on Thursdays, not at Larkspur Lane/);
    const wrongRoom = await book({
      patientId: p.id,
      start: `${MON}T10:00:00Z`,
      siteId: main.id,
      roomId: (await room(hill.id, "Consulting room")).id,
    });
    expect(wrongRoom.status).toBe(422);
    expect(((await wrongRoom.json()) as { fieldErrors: Record<string, string[]> }).fieldErrors.roomId![0]).toMatch(
      /Consulting room is not a room at Larkspur Lane/,
    );
    const noRoom = await book({
      patientId: p.id,
      start: `${MON}T10:00:00Z`,
      roomId: "00000000-0000-4000-8000-000000000000",
    });
    expect(noRoom.status).toBe(422);
    expect(((await noRoom.json()) as { error: string }).error).toMatch(/No such room at Larkspur Lane/);
    expect(await db.select().from(appointments).where(eq(appointments.patientId, p.id))).toHaveLength(0);
  });

  it("refuses a room double-booked (409 naming who has it) and the database refuses it too", async () => {
    const p1 = await newPatient();
    const p2 = await newPatient();
    const room2 = await room(main.id, "Room 2");
    expect((await book({ patientId: p1.id, start: `${MON}T11:00:00Z` })).status).toBe(201); // the optometrist, Room 2
    const clash = await postBooking({
      patientId: p2.id,
      providerId: ids.owner.id,
      appointmentTypeId: ids.examType.id,
      start: `${MON}T11:15:00Z`,
      roomId: room2.id,
    });
    expect(clash.status).toBe(409);
    expect(((await clash.json()) as { error: string }).error).toMatch(
      /Room 2 at Larkspur Lane is in use by .* Choose another room or time/,
    );
    // The owner in their own room at the same time is fine.
    expect(
      (
        await postBooking({
          patientId: p2.id,
          providerId: ids.owner.id,
          appointmentTypeId: ids.examType.id,
          start: `${MON}T11:15:00Z`,
        })
      ).status,
    ).toBe(201);
    await expect(
      db.insert(appointments).values({
        patientId: p2.id,
        providerId: ids.receptionist.id,
        appointmentTypeId: ids.collectionType.id,
        siteId: main.id,
        roomId: room2.id,
        startsAt: new Date(`${MON}T11:20:00Z`),
        endsAt: new Date(`${MON}T11:30:00Z`),
      }),
    ).rejects.toMatchObject({ cause: { constraint: "appointments_no_room_overlap" } });
  });

  it("the database refuses a clinician double-booked across sites, and a room of another site", async () => {
    const p = await newPatient();
    expect((await book({ patientId: p.id, start: `${MON}T14:00:00Z` })).status).toBe(201); // at Larkspur Lane
    await expect(
      db.insert(appointments).values({
        patientId: p.id,
        providerId: ids.optometrist.id,
        appointmentTypeId: ids.examType.id,
        siteId: hill.id,
        startsAt: new Date(`${MON}T14:10:00Z`),
        endsAt: new Date(`${MON}T14:40:00Z`),
      }),
    ).rejects.toMatchObject({ cause: { constraint: "appointments_no_provider_overlap" } });
    await expect(
      db.insert(appointments).values({
        patientId: p.id,
        providerId: ids.owner.id,
        appointmentTypeId: ids.examType.id,
        siteId: main.id,
        roomId: (await room(hill.id, "Consulting room")).id,
        startsAt: new Date(`${MON}T16:00:00Z`),
        endsAt: new Date(`${MON}T16:30:00Z`),
      }),
    ).rejects.toMatchObject({ cause: { constraint: "appointments_room_at_site_fk" } });
  });
});

describe("the portal's choice of site", () => {
  it("offers only the times of providers working at the chosen site that day", async () => {
    const typeId = ids.examType.id;
    const { appointmentTypes } = await import("~/db/schema");
    await db.update(appointmentTypes).set({ onlineBooking: true }).where(eq(appointmentTypes.id, typeId));
    const early = new Date("2028-01-01T00:00:00Z");
    const thuHill = await freeSlots(typeId, "2028-03-16", "Europe/London", early, hill.id);
    expect(thuHill.length).toBeGreaterThan(0);
    expect(new Set(thuHill.map((s) => s.providerId))).toEqual(new Set([ids.optometrist.id]));
    expect(await freeSlots(typeId, "2028-03-13", "Europe/London", early, hill.id)).toEqual([]); // a Monday: nobody there
    const thuMain = await freeSlots(typeId, "2028-03-16", "Europe/London", early, main.id);
    expect(thuMain.some((s) => s.providerId === ids.optometrist.id)).toBe(false);
  });
});

describe("site filters", () => {
  it("the calendar's events and the day list filter by site; the day list remembers the choice in a cookie", async () => {
    const p = await newPatient();
    expect((await book({ patientId: p.id, start: `${THU}T15:00:00Z` })).status).toBe(201);
    const cookie = await cookieFor("receptionist");
    const events = (await run(
      eventsLoader,
      makeRequest(`/api/appointments?start=${MON}&end=2028-03-11&site=${hill.id}`, { cookie }),
    )) as Response;
    const list = expandCalendarFeed((await events.json()) as CalendarFeed);
    expect(list.length).toBeGreaterThan(0);
    expect(list.every((e) => e.start.startsWith(THU))).toBe(true);
    const bad = (await run(
      eventsLoader,
      makeRequest(`/api/appointments?start=${MON}&end=2028-03-11&site=nowhere`, { cookie }),
    )) as Response;
    expect(bad.status).toBe(400);

    const chosen = await run(dayLoader, makeRequest(`/schedule/day?date=${THU}&site=${hill.id}`, { cookie }));
    const setCookie = new Headers((chosen as { init?: { headers?: HeadersInit } }).init?.headers).get("set-cookie")!;
    expect(setCookie).toMatch(/^dioptra_site=/);
    expect(
      dataOf<{ site: string; appointments: { place: string }[] }>(chosen).appointments.every((a) =>
        a.place.startsWith("Hillcrest Parade"),
      ),
    ).toBe(true);
    // Next visit without ?site=: the remembered choice.
    const remembered = dataOf<{ site: string }>(
      await run(
        dayLoader,
        makeRequest(`/schedule/day?date=${MON}`, { cookie: `${cookie}; ${setCookie.split(";")[0]}` }),
      ),
    );
    expect(remembered.site).toBe(hill.id);
    const everywhere = dataOf<{ site: string }>(
      await run(dayLoader, makeRequest(`/schedule/day?date=${MON}`, { cookie })),
    );
    expect(everywhere.site).toBe("all");
  });
});

describe("each site's own time zone", () => {
  it("a booking at a site is read in its zone, and the calendar and day list show that site's wall clock", async () => {
    // A site on the other side of the Atlantic: 5 March 2028 is a Sunday, before either side
    // changes its clocks (US second Sunday of March, UK last Sunday), so New York is UTC−5 and London UTC.
    const [harbour] = await db
      .insert(sites)
      .values({
        name: `Harbour ${Math.random().toString(36).slice(2, 6)}`,
        addressLine1: "1 Pier Road",
        timeZone: "America/New_York",
      })
      .returning();
    const sunday = await db
      .select()
      .from(workingHours)
      .where(and(eq(workingHours.providerId, ids.owner.id), eq(workingHours.weekday, 7)));
    expect(sunday).toEqual([]);
    const [wh] = await db
      .insert(workingHours)
      .values({ providerId: ids.owner.id, weekday: 7, startMinute: 9 * 60, endMinute: 12 * 60, siteId: harbour!.id })
      .returning();
    const cookie = await cookieFor("receptionist");
    try {
      const p = await newPatient();
      const res = await postBooking({
        patientId: p.id,
        providerId: ids.owner.id,
        appointmentTypeId: ids.examType.id,
        siteId: harbour!.id,
        start: "2028-03-05T09:00:00",
      });
      expect(res.status).toBe(201);
      const booked = (await res.json()) as { appointment: { id: string; start: string } };
      expect(booked.appointment.start).toBe("2028-03-05T09:00:00-05:00");
      const [row] = await db.select().from(appointments).where(eq(appointments.id, booked.appointment.id));
      expect(row!.startsAt.toISOString()).toBe("2028-03-05T14:00:00.000Z");
      expect(row!.siteId).toBe(harbour!.id);

      // The calendar's feed for that site, asked in its wall clock, answers in its offset.
      const feed = (await run(
        eventsLoader,
        makeRequest(`/api/appointments?start=2028-03-05T00:00:00&end=2028-03-06T00:00:00&site=${harbour!.id}`, {
          cookie,
        }),
      )) as Response;
      expect(
        expandCalendarFeed((await feed.json()) as CalendarFeed).find((e) => e.id === booked.appointment.id)?.start,
      ).toBe("2028-03-05T09:00:00-05:00");
      const page = dataOf<{ timeZone: string; siteName: string }>(
        await run(calendarLoader, makeRequest(`/schedule?site=${harbour!.id}&date=2028-03-05`, { cookie })),
      );
      expect(page).toMatchObject({ timeZone: "America/New_York", siteName: harbour!.name });
      const everySite = dataOf<{ timeZone: string }>(
        await run(calendarLoader, makeRequest(`/schedule?site=all&date=2028-03-05`, { cookie })),
      );
      expect(everySite.timeZone).toBe("Europe/London");

      const there = dataOf<{ timeZone: string; appointments: { id: string; time: string }[] }>(
        await run(dayLoader, makeRequest(`/schedule/day?date=2028-03-05&site=${harbour!.id}`, { cookie })),
      );
      expect(there.timeZone).toBe("America/New_York");
      expect(there.appointments.find((a) => a.id === booked.appointment.id)?.time).toMatch(/^09:00–/);
      const all = dataOf<{ appointments: { id: string; time: string }[] }>(
        await run(dayLoader, makeRequest(`/schedule/day?date=2028-03-05&site=all`, { cookie })),
      );
      expect(all.appointments.find((a) => a.id === booked.appointment.id)?.time).toMatch(/^14:00–/);

      // A move sent as wall time (no offset) is read at the appointment's site too.
      const move = (await run(
        moveAction,
        makeRequest(`/api/appointments/${booked.appointment.id}`, {
          method: "PATCH",
          cookie,
          json: { start: "2028-03-05T10:30:00" },
        }),
        { appointmentId: booked.appointment.id },
      )) as Response;
      expect(move.status).toBe(200);
      const [moved] = await db.select().from(appointments).where(eq(appointments.id, booked.appointment.id));
      expect(moved!.startsAt.toISOString()).toBe("2028-03-05T15:30:00.000Z");

      // 08:00 at the site is before the owner's hours there, though it is 13:00 in London.
      const early = await postBooking({
        patientId: p.id,
        providerId: ids.owner.id,
        appointmentTypeId: ids.examType.id,
        siteId: harbour!.id,
        start: "2028-03-05T08:00:00",
      });
      expect(early.status).toBe(422);
    } finally {
      await db.delete(appointments).where(eq(appointments.siteId, harbour!.id));
      await db.delete(workingHours).where(eq(workingHours.id, wh!.id));
      await db.delete(sites).where(eq(sites.id, harbour!.id));
    }
  });
});

describe("Settings → Sites", () => {
  it("is for the owner only", async () => {
    expect(
      statusOf(await run(sitesLoader, makeRequest("/settings/sites", { cookie: await cookieFor("receptionist") }))),
    ).toBe(403);
    expect(
      statusOf(await run(sitesAction, post("/settings/sites", await cookieFor("optometrist"), [["name", "Sneaky"]]))),
    ).toBe(403);
  });

  it("refuses bad input field by field and saves nothing", async () => {
    const owner = await cookieFor("owner");
    const before = await db.select({ n: sql<number>`count(*)::int` }).from(sites);
    const res = await run(
      sitesAction,
      post("/settings/sites", owner, [
        ["siteId", ""],
        ["name", "Larkspur lane"],
        ["timeZone", "Mars/Olympus"],
        ["open-1", "18:00"],
        ["close-1", "09:00"],
        ["active", "on"],
        ["newRoom", "x".repeat(61)],
      ]),
    );
    expect(statusOf(res)).toBe(400);
    const errors = dataOf<{ errors: Record<string, string[]> }>(res).errors;
    expect(errors.name![0]).toMatch(/already has this name/);
    expect(errors.timeZone![0]).toMatch(/IANA/);
    expect(errors["hours-1"]![0]).toMatch(/Closing must be after opening/);
    expect(errors.newRoom![0]).toMatch(/60/);
    expect(await db.select({ n: sql<number>`count(*)::int` }).from(sites)).toEqual(before);
    // Closing a site someone works at, or un-defaulting the default, is refused.
    const close = await run(
      sitesAction,
      post("/settings/sites", owner, [
        ["siteId", hill.id],
        ["name", hill.name],
        ["timeZone", "Europe/London"],
        ["open-2", "09:00"],
        ["close-2", "17:30"],
        ["open-4", "09:00"],
        ["close-4", "17:30"],
      ]),
    );
    expect(dataOf<{ errors: Record<string, string[]> }>(close).errors.active![0]).toMatch(/works here on Thursdays/);
    const undefault = await run(
      sitesAction,
      post("/settings/sites", owner, [
        ["siteId", main.id],
        ["name", main.name],
        ["timeZone", "Europe/London"],
        ["active", "on"],
      ]),
    );
    expect(dataOf<{ errors: Record<string, string[]> }>(undefault).errors.isDefault![0]).toMatch(
      /Make another site the default/,
    );
  });

  it("adds a site with opening hours and a room; working hours there must fit its days and rooms", async () => {
    const owner = await cookieFor("owner");
    const name = `Quayside ${Math.random().toString(36).slice(2, 6)}`;
    const res = await run(
      sitesAction,
      post("/settings/sites", owner, [
        ["siteId", ""],
        ["name", name],
        ["addressLine1", "1 Quay Street"],
        ["city", "Brackenford"],
        ["timeZone", "Europe/London"],
        ["active", "on"],
        ["open-3", "10:00"],
        ["close-3", "16:00"],
        ["newRoom", "Room A"],
      ]),
    );
    expect(statusOf(res)).toBe(302);
    const [quay] = await db.select().from(sites).where(eq(sites.name, name));
    expect(quay).toMatchObject({ isDefault: false, active: true, addressLine1: "1 Quay Street" });
    const roomA = await room(quay!.id, "Room A");
    expect(roomA).toBeTruthy();
    const room1 = await room(main.id, "Room 1");
    // The owner on Wednesday at Quayside: outside its hours, a room of another site, a closed day.
    const keep = await db.select().from(workingHours).where(eq(workingHours.providerId, ids.owner.id));
    const hours = (extra: [string, string][]) =>
      post("/settings/hours", owner, [["providerId", ids.owner.id], ...extra]);
    const outside = await run(
      hoursAction,
      hours([
        ["start-3", "09:00"],
        ["end-3", "17:00"],
        ["site-3", quay!.id],
      ]),
    );
    expect(dataOf<{ errors: Record<string, string[]> }>(outside).errors["hours-3"]![0]).toMatch(
      /open 10:00–16:00 on Wednesdays/,
    );
    const foreignRoom = await run(
      hoursAction,
      hours([
        ["start-3", "10:00"],
        ["end-3", "16:00"],
        ["site-3", quay!.id],
        ["room-3", room1.id],
      ]),
    );
    expect(dataOf<{ errors: Record<string, string[]> }>(foreignRoom).errors["hours-3"]![0]).toMatch(/not at Quayside/);
    const closed = await run(
      hoursAction,
      hours([
        ["start-1", "10:00"],
        ["end-1", "16:00"],
        ["site-1", quay!.id],
      ]),
    );
    expect(dataOf<{ errors: Record<string, string[]> }>(closed).errors["hours-1"]![0]).toMatch(/closed on Mondays/);
    expect(await db.select().from(workingHours).where(eq(workingHours.providerId, ids.owner.id))).toEqual(keep);
    // Nothing saved: the owner's week is as it was. Tidy up the extra site for other tests.
    await db.delete(sites).where(eq(sites.id, quay!.id));
  });
});
