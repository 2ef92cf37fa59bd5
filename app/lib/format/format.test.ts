import { describe, expect, it } from "vitest";
import { ageInYears, calendarDateIn, formatAge, formatDate, formatMoney } from "./index";

describe("formatDate", () => {
  // CLDR en-GB date patterns: medium "d MMM y", long "d MMMM y", full "EEEE, d MMMM y" (from memory: CLDR
  // gregorian dateFormats for en-GB); 9 March 2011 was a Wednesday.
  it("writes a calendar date as it is, whatever the zone", () => {
    expect(formatDate("2011-03-09")).toBe("9 Mar 2011");
    expect(formatDate("2011-03-09", { style: "long" })).toBe("9 March 2011");
    expect(formatDate("2011-03-09", { style: "full" })).toBe("Wednesday, 9 March 2011");
    expect(formatDate("2011-03-09", { timeZone: "Pacific/Kiritimati" })).toBe("9 Mar 2011");
    expect(formatDate("2011-03-09", { timeZone: "Pacific/Pago_Pago", time: true })).toBe("9 Mar 2011");
  });

  it("writes an instant on the practice's wall clock", () => {
    const late = new Date("2024-06-30T23:30:00Z");
    // British Summer Time is UTC+1 from the last Sunday of March to the last Sunday of October
    // (Summer Time Order 2002, common practice).
    expect(formatDate(late, { timeZone: "Europe/London" })).toBe("1 Jul 2024");
    expect(formatDate(late)).toBe("30 Jun 2024");
    expect(formatDate(late.toISOString())).toBe("30 Jun 2024");
    expect(formatDate(late, { timeZone: "Europe/London", style: "long", time: true })).toBe("1 July 2024 at 00:30");
    expect(formatDate(late, { timeZone: "America/New_York", time: true })).toBe("30 Jun 2024, 19:30");
  });

  it("agrees with the platform's own en-GB formatting", () => {
    const at = new Date("2026-01-05T10:15:00Z");
    expect(formatDate(at, { style: "medium" })).toBe(
      new Intl.DateTimeFormat("en-GB", { dateStyle: "medium", timeZone: "UTC" }).format(at),
    );
    expect(formatDate(at, { style: "long" })).toBe(
      new Intl.DateTimeFormat("en-GB", { dateStyle: "long", timeZone: "UTC" }).format(at),
    );
  });

  it("reads a timestamp the platform cannot parse by its calendar date, and refuses what is no date", () => {
    expect(formatDate("2011-03-09 10:00:00+00")).toBe("9 Mar 2011");
    expect(() => formatDate("yesterday")).toThrow(RangeError);
    expect(() => formatDate(new Date(Number.NaN))).toThrow(RangeError);
  });

  it("gives today's calendar date in a zone", () => {
    // Auckland is UTC+13 in January (New Zealand daylight time, common practice).
    expect(calendarDateIn(new Date("2026-01-05T12:30:00Z"), "Pacific/Auckland")).toBe("2026-01-06");
    expect(calendarDateIn(new Date("2026-01-05T12:30:00Z"))).toBe("2026-01-05");
  });
});

describe("ages", () => {
  // Age in completed years rises on the birthday (common practice).
  it("counts whole years, rising on the birthday", () => {
    expect(ageInYears("1984-07-12", "2025-07-11")).toBe(40);
    expect(ageInYears("1984-07-12", "2025-07-12")).toBe(41);
    expect(ageInYears("2020-01-31", "2020-01-31")).toBe(0);
  });

  // A person born on 29 February reaches a new age on 1 March in common years (common practice in
  // England and Wales; local law governs).
  it("counts a 29 February birthday from 1 March in common years", () => {
    expect(ageInYears("2008-02-29", "2026-02-28")).toBe(17);
    expect(ageInYears("2008-02-29", "2026-03-01")).toBe(18);
    expect(ageInYears("2008-02-29", "2028-02-29")).toBe(20);
  });

  // Young children's ages are given in months up to two years (common practice).
  it("writes years, and months under two", () => {
    expect(formatAge("1984-07-12", "2025-07-12")).toBe("41 years");
    expect(formatAge("2023-07-12", "2025-07-12")).toBe("2 years");
    expect(formatAge("2023-07-13", "2025-07-12")).toBe("23 months");
    expect(formatAge("2025-06-12", "2025-07-12")).toBe("1 month");
    expect(formatAge("2025-06-13", "2025-07-12")).toBe("0 months");
  });
});

describe("formatMoney", () => {
  // CLDR en-GB currency pattern "¤#,##0.00"; ISO 4217 minor units: GBP and EUR 2, JPY 0, BHD 3 (from memory).
  it("writes minor units in the currency's own decimals", () => {
    expect(formatMoney(1250, "GBP")).toBe("£12.50");
    expect(formatMoney(123456789, "GBP")).toBe("£1,234,567.89");
    expect(formatMoney(-505, "GBP")).toBe("-£5.05");
    expect(formatMoney(0, "EUR")).toBe("€0.00");
    expect(formatMoney(500, "JPY")).toBe("JP¥500");
    expect(formatMoney(1234, "BHD")).toBe("BHD\u00a01.234"); // CLDR puts a no-break space after a code
  });

  it("agrees with the platform for a two-decimal currency", () => {
    expect(formatMoney(9999, "USD")).toBe(
      new Intl.NumberFormat("en-GB", { style: "currency", currency: "USD" }).format(99.99),
    );
  });
});

describe("shared Intl formatters", () => {
  it("builds one formatter per locale and options, and formats exactly as a new one would", async () => {
    const { dateTimeFormat, numberFormat } = await import("./intl");
    const london = { timeZone: "Europe/London", hour: "2-digit", minute: "2-digit", hourCycle: "h23" } as const;
    expect(dateTimeFormat("en-GB", london)).toBe(dateTimeFormat("en-GB", { ...london }));
    expect(dateTimeFormat("en-GB", london)).not.toBe(dateTimeFormat("en-GB", { ...london, timeZone: "UTC" }));
    // 1 July 2027 12:00 UTC is 13:00 in London (BST, UTC+1: the UK's Summer Time Order, from memory).
    const july = new Date("2027-07-01T12:00:00Z");
    expect(dateTimeFormat("en-GB", london).format(july)).toBe("13:00");
    expect(dateTimeFormat("en-GB", { ...london, timeZone: "UTC" }).format(july)).toBe("12:00");
    expect(dateTimeFormat("en-GB", london).format(july)).toBe(new Intl.DateTimeFormat("en-GB", london).format(july));
    const gbp = { style: "currency", currency: "GBP" } as const;
    expect(numberFormat("en-GB", gbp)).toBe(numberFormat("en-GB", gbp));
    expect(numberFormat("en-GB", gbp).format(12.5)).toBe("£12.50");
  });
});
