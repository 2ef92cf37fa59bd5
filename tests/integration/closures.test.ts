import { and, eq, inArray } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { freeSlots } from "~/models/portal/portal.server";
import { action as moveAction } from "~/routes/api/appointments-item";
import { action as closuresAction, loader as closuresLoader } from "~/routes/settings/closures";
import { action as sitesAction } from "~/routes/settings/sites";
import { appointments, appointmentTypes, closures, rooms, siteOpeningHours, sites } from "~/db/schema";
import { db } from "~/utils/db.server";
import { cookieFor, dataOf, makeRequest, run, statusOf } from "#tests/support/helpers";
import { demoIds, newPatient, postBooking } from "./schedule-fixtures";

let ids: Awaited<ReturnType<typeof demoIds>>;
let main: typeof sites.$inferSelect;
let online: typeof appointmentTypes.$inferSelect;
// A week of June 2028 no other test books: 12 June is a Monday, 14 June a Wednesday (London is UTC+1).
const MON = "2028-06-12";
const TUE = "2028-06-13";
const WED = "2028-06-14";
const at = (date: string, hhmm: string) => `${date}T${hhmm}:00+01:00`;
const added: string[] = [];

beforeAll(async () => {
  ids = await demoIds();
  main = (await db.select().from(sites).where(eq(sites.isDefault, true)))[0]!;
  online = (
    await db
      .insert(appointmentTypes)
      .values({ name: `Online check ${Date.now()}`, durationMinutes: 30, onlineBooking: true })
      .returning()
  )[0]!;
});

afterAll(async () => {
  if (added.length) await db.delete(closures).where(inArray(closures.id, added));
  await db.delete(appointments).where(eq(appointments.appointmentTypeId, online.id));
  await db.delete(appointmentTypes).where(eq(appointmentTypes.id, online.id));
});

const bookAs = (providerId: string, start: string) =>
  newPatient().then((p) => postBooking({ patientId: p.id, providerId, appointmentTypeId: online.id, start }));

async function addClosure(form: Record<string, string>, role: "owner" | "receptionist" = "owner") {
  const result = await run(
    closuresAction,
    makeRequest("/settings/closures", { cookie: await cookieFor(role), form: { intent: "add", ...form } }),
  );
  const status = statusOf(result);
  if (status === 302) {
    const [row] = await db
      .select()
      .from(closures)
      .where(and(eq(closures.reason, form.reason!), eq(closures.startsOn, form.startsOn!)));
    if (row) added.push(row.id);
    return { status, row };
  }
  return { status, errors: dataOf<{ result?: { error?: Record<string, string[]> } }>(result).result?.error ?? {} };
}

describe("Settings → Opening and closures", () => {
  it("is for the owner only", async () => {
    expect(
      statusOf(
        await run(closuresLoader, makeRequest("/settings/closures", { cookie: await cookieFor("receptionist") })),
      ),
    ).toBe(403);
    const refused = await addClosure({ kind: "practice", startsOn: MON, reason: "Sneaky" }, "receptionist");
    expect(refused.status).toBe(403);
    expect(await db.select().from(closures).where(eq(closures.reason, "Sneaky"))).toEqual([]);
  });

  it("refuses bad input field by field and saves nothing", async () => {
    const backwards = await addClosure({ kind: "practice", startsOn: WED, endsOn: MON, reason: "Backwards" });
    expect(backwards.status).toBe(400);
    expect(backwards.errors!.endsOn![0]).toMatch(/on or after the first day/);
    const noReason = await addClosure({ kind: "practice", startsOn: MON, reason: " " });
    expect(noReason.status).toBe(400);
    expect(noReason.errors!.reason![0]).toMatch(/Say why/);
    const leave = await addClosure({ kind: "leave", startsOn: MON, reason: "Annual leave" });
    expect(leave.status).toBe(400);
    expect(leave.errors!.providerId![0]).toMatch(/Choose the clinician/);
    const notADay = await addClosure({ kind: "practice", startsOn: "2028-02-30", reason: "Typo" });
    expect(notADay.status).toBe(400);
    expect(notADay.errors!.startsOn![0]).toMatch(/date/);
    const tooLong = await addClosure({
      kind: "practice",
      startsOn: "2028-01-04",
      endsOn: "2029-06-01",
      reason: "Rebuild",
    });
    expect(tooLong.status).toBe(422);
    expect(tooLong.errors!.endsOn![0]).toMatch(/at most 366 days/);
    expect(
      await db
        .select()
        .from(closures)
        .where(inArray(closures.reason, ["Backwards", "Annual leave", "Typo", "Rebuild"])),
    ).toEqual([]);
  });

  it("lists the seeded England and Wales bank holidays", async () => {
    const page = dataOf<{ closures: { kind: string; startsOn: string; reason: string }[] }>(
      await run(closuresLoader, makeRequest("/settings/closures", { cookie: await cookieFor("owner") })),
    );
    // GOV.UK, "UK bank holidays", England and Wales: Christmas Day 2027 falls on a Saturday, so the
    // substitute day is Monday 27 December (https://www.gov.uk/bank-holidays).
    expect(page.closures).toContainEqual(
      expect.objectContaining({
        kind: "bank_holiday",
        startsOn: "2027-12-27",
        reason: "Christmas Day (substitute day)",
      }),
    );
  });
});

describe("booking on closed days", () => {
  it("refuses a desk booking on a bank holiday and offers no online slot that day", async () => {
    // GOV.UK, "UK bank holidays", England and Wales: Monday 27 December 2027 is a bank holiday.
    const res = await bookAs(ids.optometrist.id, "2027-12-27T10:00:00Z");
    expect(res.status).toBe(422);
    expect(((await res.json()) as { error: string }).error).toMatch(
      /The practice is closed on 27 Dec 2027 \(Christmas Day \(substitute day\), a bank holiday\)/,
    );
    expect(await freeSlots(online.id, "2027-12-27", "Europe/London", new Date("2027-12-01T00:00:00Z"))).toEqual([]);
    // The working day after it has slots.
    expect(
      (await freeSlots(online.id, "2027-12-29", "Europe/London", new Date("2027-12-01T00:00:00Z"))).length,
    ).toBeGreaterThan(0);
  });

  it("a practice closure set by the owner stops desk and online bookings and moves, until it is removed", async () => {
    const now = new Date("2028-06-01T00:00:00Z");
    expect((await freeSlots(online.id, TUE, "Europe/London", now)).length).toBeGreaterThan(0);
    const before = await bookAs(ids.optometrist.id, at(MON, "10:00"));
    expect(before.status).toBe(201);
    const appointmentId = ((await before.json()) as { appointment: { id: string } }).appointment.id;

    const made = await addClosure({ kind: "practice", startsOn: TUE, endsOn: WED, reason: "Refit of the shop floor" });
    expect(made.status).toBe(302);
    expect(made.row).toMatchObject({ kind: "practice", siteId: null, providerId: null, endsOn: WED });

    const refused = await bookAs(ids.owner.id, at(WED, "11:00"));
    expect(refused.status).toBe(422);
    const body = (await refused.json()) as { error: string; fieldErrors: Record<string, string[]> };
    expect(body.error).toBe(
      "The practice is closed from 13 Jun 2028 to 14 Jun 2028 (Refit of the shop floor). Choose another day.",
    );
    expect(body.fieldErrors.start).toEqual([body.error]);
    expect(await freeSlots(online.id, TUE, "Europe/London", now)).toEqual([]);
    expect(await freeSlots(online.id, WED, "Europe/London", now)).toEqual([]);

    // Moving Monday's visit into the closure is refused and leaves it where it was.
    const move = (await run(
      moveAction,
      makeRequest(`/api/appointments/${appointmentId}`, {
        method: "PATCH",
        cookie: await cookieFor("receptionist"),
        json: { start: at(TUE, "10:00") },
      }),
      { appointmentId },
    )) as Response;
    expect(move.status).toBe(422);
    const [kept] = await db.select().from(appointments).where(eq(appointments.id, appointmentId));
    expect(kept!.startsAt.toISOString()).toBe("2028-06-12T09:00:00.000Z");

    const removed = await run(
      closuresAction,
      makeRequest("/settings/closures", {
        cookie: await cookieFor("owner"),
        form: { intent: "remove", id: made.row!.id },
      }),
    );
    expect(statusOf(removed)).toBe(302);
    expect((await freeSlots(online.id, TUE, "Europe/London", now)).length).toBeGreaterThan(0);
    expect((await bookAs(ids.owner.id, at(WED, "11:00"))).status).toBe(201);
  });

  it("a clinician's leave stops bookings with them only", async () => {
    const now = new Date("2028-06-01T00:00:00Z");
    const made = await addClosure({
      kind: "leave",
      providerId: ids.optometrist.id,
      startsOn: "2028-06-15",
      endsOn: "2028-06-16",
      reason: "Annual leave",
    });
    expect(made.status).toBe(302);
    const refused = await bookAs(ids.optometrist.id, at("2028-06-16", "10:00"));
    expect(refused.status).toBe(422);
    expect(((await refused.json()) as { error: string }).error).toBe(
      `${ids.optometrist.name} is on leave from 15 Jun 2028 to 16 Jun 2028 (Annual leave). Choose another day or another clinician.`,
    );
    expect((await bookAs(ids.owner.id, at("2028-06-16", "10:00"))).status).toBe(201);
    const slots = await freeSlots(online.id, "2028-06-16", "Europe/London", now);
    expect(slots.length).toBeGreaterThan(0);
    expect(slots.every((s) => s.providerId === ids.owner.id)).toBe(true);
  });
});

describe("the sites' opening hours", () => {
  it("bounds bookings, the online slots and the owner's changes to the opening hours", async () => {
    const now = new Date("2028-06-01T00:00:00Z");
    const keep = await db.select().from(siteOpeningHours).where(eq(siteOpeningHours.siteId, main.id));
    const wednesday = keep.find((h) => h.weekday === 3)!;
    try {
      // Opening hours narrower than the optometrist's (09:00–17:30), as if set before the rule existed.
      await db
        .update(siteOpeningHours)
        .set({ startMinute: 10 * 60, endMinute: 17 * 60 })
        .where(eq(siteOpeningHours.id, wednesday.id));
      const early = await bookAs(ids.optometrist.id, at("2028-06-21", "09:00"));
      expect(early.status).toBe(422);
      expect(((await early.json()) as { error: string }).error).toBe(
        "Larkspur Lane is open 10:00–17:00 on Wednesdays; choose a time inside the opening hours.",
      );
      const slots = await freeSlots(online.id, "2028-06-21", "Europe/London", now);
      expect(slots.length).toBeGreaterThan(0);
      expect(slots.every((s) => s.start >= "2028-06-21T09:00:00.000Z" && s.start <= "2028-06-21T15:30:00.000Z")).toBe(
        true,
      );
      expect((await bookAs(ids.optometrist.id, at("2028-06-21", "10:00"))).status).toBe(201);

      // The owner cannot narrow a site's hours below a clinician's working hours there.
      const mainRooms = await db.select().from(rooms).where(eq(rooms.siteId, main.id));
      const entries: [string, string][] = [
        ...mainRooms.flatMap((r): [string, string][] => [
          [`room-${r.id}`, r.name],
          [`roomActive-${r.id}`, r.active ? "on" : ""],
        ]),
        ["siteId", main.id],
        ["name", main.name],
        ["timeZone", main.timeZone],
        ["isDefault", "on"],
        ["active", "on"],
        ...keep.flatMap((h): [string, string][] => [
          [`open-${h.weekday}`, h.weekday === 3 ? "10:00" : `${String(h.startMinute / 60).padStart(2, "0")}:00`],
          [`close-${h.weekday}`, `${String(h.endMinute / 60).padStart(2, "0")}:00`],
        ]),
      ];
      const res = await run(
        sitesAction,
        new Request("http://127.0.0.1:3000/settings/sites", {
          method: "POST",
          headers: { cookie: await cookieFor("owner"), "content-type": "application/x-www-form-urlencoded" },
          body: new URLSearchParams(entries),
        }),
      );
      expect(statusOf(res)).toBe(400);
      const errors = dataOf<{ errors: Record<string, string[]> }>(res).errors;
      expect(Object.keys(errors)).toEqual(["hours-3"]);
      expect(errors["hours-3"]![0]).toMatch(/works here 09:00–17:30 on Wednesdays; the opening hours must cover that/);
    } finally {
      await db.delete(siteOpeningHours).where(eq(siteOpeningHours.siteId, main.id));
      await db.insert(siteOpeningHours).values(keep);
    }
  });
});
