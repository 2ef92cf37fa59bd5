/**
 * iCalendar (RFC 5545) files for appointment e-mails, with the scheduling methods of iTIP
 * (RFC 5546): REQUEST for a new or changed appointment, CANCEL when it is called off. A calendar
 * program matches every file of one appointment by its UID and keeps the one with the highest
 * SEQUENCE, so a move or a cancellation replaces what the patient's calendar shows.
 */

export type IcsPerson = { name: string; email: string };
export type IcsEvent = {
  method: "REQUEST" | "CANCEL";
  uid: string;
  sequence: number;
  /** When this version of the event was written. */
  stamp: Date;
  start: Date;
  end: Date;
  summary: string;
  description?: string;
  location?: string;
  organizer: IcsPerson;
  attendee: IcsPerson;
  productId?: string;
};

/** TEXT values: backslash, semicolon, comma and line breaks escaped (RFC 5545 §3.3.11). */
export function escapeText(value: string) {
  return value
    .replace(/\r\n?/g, "\n")
    .replace(/\\/g, "\\\\")
    .replace(/;/g, "\\;")
    .replace(/,/g, "\\,")
    .replace(/\n/g, "\\n");
}

/** A parameter value (CN=…): quoted, as a name may hold ":" ";" ","; DQUOTE itself is not allowed in it (RFC 5545 §3.2). */
function paramValue(value: string) {
  // eslint-disable-next-line no-control-regex -- removing control characters is the point
  return `"${value.replace(/["\r\n]/g, "").replace(/[\u0000-\u001f\u007f]/g, "")}"`;
}

/** UTC DATE-TIME form 19970714T173000Z (RFC 5545 §3.3.5, form #2). */
export function utcStamp(d: Date) {
  return d
    .toISOString()
    .replace(/[-:]/g, "")
    .replace(/\.\d{3}/, "");
}

const utf8 = new TextEncoder();

/**
 * Folds a content line so no line is longer than 75 octets, excluding the line break; each
 * continuation starts with one space (RFC 5545 §3.1 "Content Lines"). A line is cut between
 * characters, never inside one character's UTF-8 bytes.
 */
export function foldLine(line: string) {
  const out: string[] = [];
  let current = "";
  let octets = 0;
  for (const ch of line) {
    const size = utf8.encode(ch).length;
    // The first line holds 75 octets; a continuation holds 74 after its leading space.
    if (octets + size > 75) {
      out.push(current);
      current = ` ${ch}`;
      octets = 1 + size;
    } else {
      current += ch;
      octets += size;
    }
  }
  out.push(current);
  return out.join("\r\n");
}

/** The calendar file: lines joined with CRLF and folded at 75 octets. */
export function buildIcs(e: IcsEvent) {
  const lines = [
    "BEGIN:VCALENDAR",
    "VERSION:2.0",
    `PRODID:${e.productId ?? "-//Dioptra//Appointments//EN"}`,
    "CALSCALE:GREGORIAN",
    `METHOD:${e.method}`,
    "BEGIN:VEVENT",
    `UID:${e.uid}`,
    `SEQUENCE:${e.sequence}`,
    `DTSTAMP:${utcStamp(e.stamp)}`,
    `DTSTART:${utcStamp(e.start)}`,
    `DTEND:${utcStamp(e.end)}`,
    `SUMMARY:${escapeText(e.summary)}`,
    ...(e.description ? [`DESCRIPTION:${escapeText(e.description)}`] : []),
    ...(e.location ? [`LOCATION:${escapeText(e.location)}`] : []),
    `STATUS:${e.method === "CANCEL" ? "CANCELLED" : "CONFIRMED"}`,
    `ORGANIZER;CN=${paramValue(e.organizer.name)}:mailto:${e.organizer.email}`,
    `ATTENDEE;CN=${paramValue(e.attendee.name)};ROLE=REQ-PARTICIPANT;PARTSTAT=${e.method === "CANCEL" ? "DECLINED" : "ACCEPTED"};RSVP=FALSE:mailto:${e.attendee.email}`,
    "END:VEVENT",
    "END:VCALENDAR",
  ];
  return `${lines.map(foldLine).join("\r\n")}\r\n`;
}

/** Reads a calendar file back into its unfolded lines (for tests and checks). */
export function unfold(ics: string) {
  return ics
    .replace(/\r\n[ \t]/g, "")
    .split("\r\n")
    .filter(Boolean);
}
