import { describe, expect, it } from "vitest";
import { closureOn, closureRefusal, type ClosureSpan } from "./closures";
import { checkOpeningHours, fitsOpeningHours } from "./hours";

const SITE = "site-a";
const OTHER = "site-b";
const DOC = "doc-1";
const span = (c: Partial<ClosureSpan>): ClosureSpan => ({
  kind: "practice",
  siteId: null,
  providerId: null,
  startsOn: "2027-08-02",
  endsOn: "2027-08-06",
  reason: "Refit",
  ...c,
});

describe("closureOn", () => {
  it("applies on every day of the range, inclusive, and not outside it", () => {
    const c = [span({})];
    expect(closureOn("2027-08-01", { siteId: SITE, providerId: DOC }, c)).toBeUndefined();
    expect(closureOn("2027-08-02", { siteId: SITE, providerId: DOC }, c)).toBe(c[0]);
    expect(closureOn("2027-08-06", { siteId: SITE, providerId: DOC }, c)).toBe(c[0]);
    expect(closureOn("2027-08-07", { siteId: SITE, providerId: DOC }, c)).toBeUndefined();
  });

  it("a site's closure leaves other sites open; leave stops only its clinician", () => {
    const site = span({ siteId: OTHER });
    const leave = span({ kind: "leave", providerId: "doc-2" });
    expect(closureOn("2027-08-03", { siteId: SITE, providerId: DOC }, [site, leave])).toBeUndefined();
    expect(closureOn("2027-08-03", { siteId: OTHER, providerId: DOC }, [site, leave])).toBe(site);
    expect(closureOn("2027-08-03", { siteId: SITE, providerId: "doc-2" }, [site, leave])).toBe(leave);
  });

  it("names the practice's closure before a clinician's leave on the same day", () => {
    const leave = span({ kind: "leave", providerId: DOC, reason: "Annual leave" });
    // GOV.UK, "UK bank holidays", England and Wales: 30 August 2027 is the summer bank holiday.
    const holiday = span({
      kind: "bank_holiday",
      startsOn: "2027-08-30",
      endsOn: "2027-08-30",
      reason: "Summer bank holiday",
    });
    const long = { ...leave, endsOn: "2027-09-03" };
    expect(closureOn("2027-08-30", { siteId: SITE, providerId: DOC }, [long, holiday])).toBe(holiday);
  });
});

describe("closureRefusal", () => {
  it("says what is closed, when and why, in plain words", () => {
    expect(
      closureRefusal(
        span({
          startsOn: "2027-12-27",
          endsOn: "2027-12-27",
          kind: "bank_holiday",
          reason: "Christmas Day (substitute day)",
        }),
        {},
      ),
    ).toBe(
      "The practice is closed on 27 Dec 2027 (Christmas Day (substitute day), a bank holiday). Choose another day.",
    );
    expect(closureRefusal(span({ siteId: SITE }), { siteName: "Hillcrest Parade" })).toBe(
      "Hillcrest Parade is closed from 2 Aug 2027 to 6 Aug 2027 (Refit). Choose another day.",
    );
    expect(
      closureRefusal(span({ kind: "leave", providerId: DOC, reason: "Course" }), { providerName: "Dr Ada Quill" }),
    ).toBe("Dr Ada Quill is on leave from 2 Aug 2027 to 6 Aug 2027 (Course). Choose another day or another clinician.");
  });
});

describe("opening hours", () => {
  const opening = [{ weekday: 3, startMinute: 10 * 60, endMinute: 17 * 60 }];
  it("refuses a time outside a site's hours or on its closed day, and does not limit a site without hours", () => {
    // Wednesday 4 August 2027, London on BST (UTC+1).
    const at = (hhmm: string) => new Date(`2027-08-04T${hhmm}:00+01:00`);
    expect(checkOpeningHours(at("10:00"), at("10:30"), "Europe/London", opening, "Larkspur Lane")).toEqual({
      ok: true,
    });
    expect(checkOpeningHours(at("09:30"), at("10:00"), "Europe/London", opening, "Larkspur Lane")).toEqual({
      ok: false,
      reason: "Larkspur Lane is open 10:00–17:00 on Wednesdays; choose a time inside the opening hours.",
    });
    expect(checkOpeningHours(at("16:45"), at("17:15"), "Europe/London", opening, "Larkspur Lane").ok).toBe(false);
    const thursday = new Date("2027-08-05T11:00:00+01:00");
    expect(
      checkOpeningHours(thursday, new Date(thursday.getTime() + 1_800_000), "Europe/London", opening, "Larkspur Lane"),
    ).toEqual({
      ok: false,
      reason: "Larkspur Lane is closed on Thursdays. Choose another day.",
    });
    expect(
      checkOpeningHours(thursday, new Date(thursday.getTime() + 1_800_000), "Europe/London", [], "New site"),
    ).toEqual({
      ok: true,
    });
  });

  it("a clinician's working day must fit inside the site's day", () => {
    expect(fitsOpeningHours({ weekday: 3, startMinute: 600, endMinute: 1020 }, opening, "Larkspur Lane").ok).toBe(true);
    expect(fitsOpeningHours({ weekday: 3, startMinute: 540, endMinute: 1020 }, opening, "Larkspur Lane")).toEqual({
      ok: false,
      reason: "Larkspur Lane is open 10:00–17:00 on Wednesdays; working hours must fit inside.",
    });
    expect(fitsOpeningHours({ weekday: 4, startMinute: 600, endMinute: 700 }, opening, "Larkspur Lane").ok).toBe(false);
  });
});
