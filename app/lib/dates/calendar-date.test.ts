import { describe, expect, it } from "vitest";
import { isCalendarDate, isCalendarMonth } from "./calendar-date";

describe("isCalendarDate", () => {
  // Gregorian calendar: February has 29 days in years divisible by 4, except centuries not divisible by 400 (common practice).
  it.each(["2026-02-28", "2024-02-29", "2000-02-29", "2026-12-31", "1000-01-01", "9999-12-31"])("accepts %s", (d) =>
    expect(isCalendarDate(d)).toBe(true),
  );
  it.each([
    "2026-02-30",
    "2026-02-29",
    "1900-02-29",
    "2026-04-31",
    "2026-13-01",
    "2026-00-10",
    "2026-01-00",
    "0000-01-01",
    "0999-12-31",
    "2026-1-01",
    "2026-01-01T00:00",
    "",
    "20260101",
  ])("refuses %j", (d) => expect(isCalendarDate(d)).toBe(false));
  it("reads months", () => {
    expect(isCalendarMonth("2026-02")).toBe(true);
    for (const m of ["2026-13", "0000-01", "2026-00", "2026-2"]) expect(isCalendarMonth(m)).toBe(false);
  });
});
