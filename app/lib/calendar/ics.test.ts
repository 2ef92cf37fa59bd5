import { describe, expect, it } from "vitest";
import { buildIcs, escapeText, foldLine, unfold, utcStamp } from "./ics";

const event = {
  method: "REQUEST" as const,
  uid: "appointment-1@dioptra",
  sequence: 2,
  stamp: new Date("2026-12-02T10:00:00Z"),
  start: new Date("2027-01-05T09:30:00Z"),
  end: new Date("2027-01-05T10:00:00Z"),
  summary: "Eye examination at Larkspur Lane Eye Care",
  description: "Eye examination with Tobias Wren; bring your glasses, please.",
  location: "Larkspur Lane Eye Care, 14 Larkspur Lane, Brackenford — the entrance beside the bakery on Łąkowa Street",
  organizer: { name: "Larkspur Lane Eye Care", email: "desk@larkspur.test" },
  attendee: { name: "Zofia Wróblewska-Łukasiewicz", email: "zofia@example.test" },
};

describe("iCalendar files", () => {
  it("folds every line at 75 octets, continuation lines starting with one space (RFC 5545 §3.1)", () => {
    const ics = buildIcs(event);
    expect(ics.endsWith("\r\n")).toBe(true);
    for (const line of ics.split("\r\n")) expect(Buffer.byteLength(line, "utf8")).toBeLessThanOrEqual(75);
    expect(ics).toMatch(/\r\n /); // the long LOCATION was folded
    // Unfolding (removing CRLF + one space) gives the original, multi-byte letters intact.
    expect(unfold(ics)).toContain(`LOCATION:${escapeText(event.location)}`);
  });

  it("never splits a multi-byte character", () => {
    const folded = foldLine(`DESCRIPTION:${"ł".repeat(100)}`);
    for (const line of folded.split("\r\n")) {
      expect(Buffer.byteLength(line, "utf8")).toBeLessThanOrEqual(75);
      expect(line).not.toContain("\ufffd");
    }
    expect(folded.replace(/\r\n /g, "")).toBe(`DESCRIPTION:${"ł".repeat(100)}`);
  });

  it("escapes TEXT values (RFC 5545 §3.3.11) and writes UTC date-times (§3.3.5)", () => {
    expect(escapeText("a;b,c\\d\nnext")).toBe("a\\;b\\,c\\\\d\\nnext");
    expect(utcStamp(new Date("2027-01-05T09:30:00.123Z"))).toBe("20270105T093000Z");
  });

  it("names the practice as ORGANIZER and the patient as ATTENDEE, with METHOD, UID and SEQUENCE", () => {
    const lines = unfold(buildIcs(event));
    expect(lines).toContain("METHOD:REQUEST");
    expect(lines).toContain("UID:appointment-1@dioptra");
    expect(lines).toContain("SEQUENCE:2");
    expect(lines).toContain("DTSTART:20270105T093000Z");
    expect(lines).toContain('ORGANIZER;CN="Larkspur Lane Eye Care":mailto:desk@larkspur.test');
    expect(lines).toContain(
      'ATTENDEE;CN="Zofia Wróblewska-Łukasiewicz";ROLE=REQ-PARTICIPANT;PARTSTAT=ACCEPTED;RSVP=FALSE:mailto:zofia@example.test',
    );
    const cancel = unfold(buildIcs({ ...event, method: "CANCEL", sequence: 3 }));
    expect(cancel).toContain("METHOD:CANCEL");
    expect(cancel).toContain("STATUS:CANCELLED");
    expect(cancel).toContain("SEQUENCE:3");
  });
});
