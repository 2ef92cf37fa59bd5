import { describe, expect, it } from "vitest";
import { checkWorkingHours, slotsForDay } from "./hours";
import { addMonths, ageOn, recallDueDate } from "./recall";
import { canChangeStatus } from "./status";
import { addDays, localDayRange, localParts, startOfWeek, toZonedIso, wallTimeToInstant } from "./time";

const LONDON = "Europe/London";
// UK clock changes: summer time begins and ends at 01:00 GMT on the last Sunday of March and of
// October (Directive 2000/84/EC, Articles 2 and 3, as kept in UK law; from memory).
// In 2027 those Sundays are 28 March and 31 October.

describe("wall-clock times in Europe/London across daylight-saving changes", () => {
  it("maps 09:00 local to 09:00Z before the spring change and to 08:00Z after it", () => {
    expect(wallTimeToInstant("2027-03-27", 9 * 60, LONDON)?.toISOString()).toBe("2027-03-27T09:00:00.000Z");
    expect(wallTimeToInstant("2027-03-28", 9 * 60, LONDON)?.toISOString()).toBe("2027-03-28T08:00:00.000Z");
    expect(wallTimeToInstant("2027-10-30", 9 * 60, LONDON)?.toISOString()).toBe("2027-10-30T08:00:00.000Z");
    expect(wallTimeToInstant("2027-10-31", 9 * 60, LONDON)?.toISOString()).toBe("2027-10-31T09:00:00.000Z");
  });

  it("says a skipped spring time does not exist, and keeps the ambiguous autumn hour's later occurrence", () => {
    expect(wallTimeToInstant("2027-03-28", 90, LONDON)).toBeNull(); // 01:30 is skipped
    expect(wallTimeToInstant("2027-10-31", 90, LONDON)?.toISOString()).toBe("2027-10-31T01:30:00.000Z");
  });

  it("gives the change days 23 and 25 hours, other days 24", () => {
    const hours = (d: string) => {
      const r = localDayRange(d, LONDON);
      return (r.end.getTime() - r.start.getTime()) / 3_600_000;
    };
    expect(hours("2027-03-28")).toBe(23);
    expect(hours("2027-10-31")).toBe(25);
    expect(hours("2027-06-15")).toBe(24);
  });

  it("writes ISO times with the zone's own offset", () => {
    expect(toZonedIso(new Date("2027-03-29T08:00:00Z"), LONDON)).toBe("2027-03-29T09:00:00+01:00");
    expect(toZonedIso(new Date("2027-01-04T09:00:00Z"), LONDON)).toBe("2027-01-04T09:00:00+00:00");
  });

  it("formats many instants fast with the same result as the exact formatter, across both changes and other zones", async () => {
    const { zonedIsoFormatter } = await import("./time");
    for (const tz of [LONDON, "America/New_York", "Asia/Kolkata", "Australia/Lord_Howe", "UTC"]) {
      const fast = zonedIsoFormatter(tz);
      for (let t = Date.UTC(2027, 2, 27); t < Date.UTC(2027, 2, 29); t += 7 * 60_000)
        expect(fast(t)).toBe(toZonedIso(new Date(t), tz));
      for (let t = Date.UTC(2027, 9, 30); t < Date.UTC(2027, 10, 1); t += 7 * 60_000)
        expect(fast(t)).toBe(toZonedIso(new Date(t), tz));
    }
  });

  it("reads local day, weekday and minute of an instant", () => {
    expect(localParts(new Date("2027-03-28T23:30:00Z"), LONDON)).toEqual({
      date: "2027-03-29",
      weekday: 1,
      minute: 30,
    });
    expect(localParts(new Date("2027-10-31T23:30:00Z"), LONDON)).toEqual({
      date: "2027-10-31",
      weekday: 7,
      minute: 23 * 60 + 30,
    });
  });

  it("does calendar arithmetic without time zones", () => {
    expect(addDays("2027-03-27", 2)).toBe("2027-03-29");
    expect(addDays("2028-02-28", 1)).toBe("2028-02-29");
    expect(startOfWeek("2027-03-28")).toBe("2027-03-22");
  });
});

describe("working hours and breaks", () => {
  const hours = [1, 2, 3, 4, 5].map((weekday) => ({ weekday, startMinute: 9 * 60, endMinute: 17 * 60 }));
  const breaks = [1, 2, 3, 4, 5].map((weekday) => ({
    weekday,
    startMinute: 13 * 60,
    endMinute: 14 * 60,
    label: "Lunch",
  }));

  it("accepts a slot inside the day and refuses one before opening, one in the lunch break, and a weekend", () => {
    expect(
      checkWorkingHours(new Date("2027-03-29T08:00:00Z"), new Date("2027-03-29T08:30:00Z"), LONDON, hours, breaks),
    ).toEqual({ ok: true });
    const early = checkWorkingHours(
      new Date("2027-03-26T08:30:00Z"),
      new Date("2027-03-26T09:00:00Z"),
      LONDON,
      hours,
      breaks,
    );
    expect(early).toMatchObject({
      ok: false,
      reason: expect.stringContaining("Outside the provider's working hours on Friday (09:00–17:00)"),
    });
    const lunch = checkWorkingHours(
      new Date("2027-03-29T12:30:00Z"),
      new Date("2027-03-29T13:00:00Z"),
      LONDON,
      hours,
      breaks,
    );
    expect(lunch).toMatchObject({ ok: false, reason: expect.stringContaining("lunch") });
    const sunday = checkWorkingHours(
      new Date("2027-03-28T10:00:00Z"),
      new Date("2027-03-28T10:30:00Z"),
      LONDON,
      hours,
      breaks,
    );
    expect(sunday).toMatchObject({ ok: false, reason: "The provider does not work on Sundays." });
  });

  it("judges 08:30Z as 09:30 BST (open) after the spring change, though it is 08:30 GMT (closed) the Friday before", () => {
    expect(
      checkWorkingHours(new Date("2027-03-29T08:30:00Z"), new Date("2027-03-29T09:00:00Z"), LONDON, hours).ok,
    ).toBe(true);
    expect(
      checkWorkingHours(new Date("2027-03-26T08:30:00Z"), new Date("2027-03-26T09:00:00Z"), LONDON, hours).ok,
    ).toBe(false);
  });

  it("lists a day's slots at the same wall times on both sides of a change", () => {
    const before = slotsForDay("2027-10-29", LONDON, hours, breaks, 30);
    const after = slotsForDay("2027-11-01", LONDON, hours, breaks, 30);
    expect(before).toHaveLength(14); // 16 half-hours from 09:00 to 17:00 less the two in the lunch hour
    expect(before[0]!.toISOString()).toBe("2027-10-29T08:00:00.000Z");
    expect(after[0]!.toISOString()).toBe("2027-11-01T09:00:00.000Z");
    expect(after.map((d) => localParts(d, LONDON).minute)).toEqual(before.map((d) => localParts(d, LONDON).minute));
  });
});

describe("recall due dates", () => {
  const settings = { recallMonthsChild: 12, recallMonthsAdult: 24, childUnderYears: 16 };
  it("uses 12 months for a child and 24 for an adult unless the visit type sets its own", () => {
    expect(
      recallDueDate({ typeRecallMonths: null, dateOfBirth: "2015-06-01", examDate: "2026-05-10" }, settings),
    ).toEqual({ dueDate: "2027-05-10", months: 12, rule: "child default" });
    expect(
      recallDueDate({ typeRecallMonths: null, dateOfBirth: "1979-04-17", examDate: "2026-05-10" }, settings),
    ).toEqual({ dueDate: "2028-05-10", months: 24, rule: "adult default" });
    expect(recallDueDate({ typeRecallMonths: 6, dateOfBirth: "1979-04-17", examDate: "2026-05-10" }, settings)).toEqual(
      { dueDate: "2026-11-10", months: 6, rule: "visit type" },
    );
    expect(
      recallDueDate(
        { planRecallMonths: 3, typeRecallMonths: 6, dateOfBirth: "1979-04-17", examDate: "2026-05-10" },
        settings,
      ),
    ).toEqual({ dueDate: "2026-08-10", months: 3, rule: "optometrist's plan" });
  });
  it("counts age in whole years on the exam day; a 16th birthday makes an adult", () => {
    expect(ageOn("2010-05-10", "2026-05-09")).toBe(15);
    expect(ageOn("2010-05-10", "2026-05-10")).toBe(16);
    expect(
      recallDueDate({ typeRecallMonths: null, dateOfBirth: "2010-05-10", examDate: "2026-05-10" }, settings).rule,
    ).toBe("adult default");
  });
  it("clamps to the end of a shorter month", () => {
    expect(addMonths("2027-01-31", 1)).toBe("2027-02-28");
    expect(addMonths("2027-01-31", 13)).toBe("2028-02-29");
    expect(addMonths("2026-12-15", 24)).toBe("2028-12-15");
  });
});

describe("status changes", () => {
  it("follows booked → confirmed → arrived → in exam → completed, never reopens a finished visit", () => {
    expect(canChangeStatus("booked", "confirmed")).toBe(true);
    expect(canChangeStatus("confirmed", "arrived")).toBe(true);
    expect(canChangeStatus("arrived", "in_exam")).toBe(true);
    expect(canChangeStatus("in_exam", "completed")).toBe(true);
    expect(canChangeStatus("completed", "booked")).toBe(false);
    expect(canChangeStatus("cancelled", "booked")).toBe(false);
    expect(canChangeStatus("booked", "in_exam")).toBe(false);
  });
});

describe("formatting in the practice zone", () => {
  it("writes day and time as the practice's clocks show them", async () => {
    const { formatLocal } = await import("./time");
    expect(formatLocal(new Date("2027-04-05T09:00:00Z"), LONDON)).toBe("Mon 5 Apr 2027, 10:00");
    expect(formatLocal(new Date("2027-01-05T09:00:00Z"), LONDON, { withDate: false })).toBe("09:00");
  });
});
