/**
 * Wall-clock arithmetic in the practice's time zone, safe across daylight-saving changes.
 * Instants are `Date`s (UTC underneath); local days are "YYYY-MM-DD" strings; times of day are
 * minutes after local midnight. No framework imports: shared by server and browser.
 */
import { dateTimeFormat } from "~/lib/format/intl";
import { TZDate } from "@date-fns/tz";

export type LocalParts = { date: string; weekday: number; minute: number };

const pad = (n: number, w = 2) => String(n).padStart(w, "0");

/** The local calendar day, ISO weekday (1 = Monday … 7 = Sunday) and minute of day of an instant. */
export function localParts(at: Date, timeZone: string): LocalParts {
  const z = new TZDate(at.getTime(), timeZone);
  const jsDay = z.getDay();
  return {
    date: `${z.getFullYear()}-${pad(z.getMonth() + 1)}-${pad(z.getDate())}`,
    weekday: jsDay === 0 ? 7 : jsDay,
    minute: z.getHours() * 60 + z.getMinutes(),
  };
}

function parseDay(date: string): [number, number, number] {
  const m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(date);
  if (!m) throw new RangeError(`Not a calendar day: ${date}`);
  return [Number(m[1]), Number(m[2]), Number(m[3])];
}

/**
 * The instant at which the practice's clocks show `minute` minutes past midnight on `date`.
 * A wall time skipped by the spring change (01:30 on the last Sunday of March in London) does
 * not exist and answers null; an ambiguous autumn time answers its later occurrence.
 */
export function wallTimeToInstant(date: string, minute: number, timeZone: string): Date | null {
  const [y, m, d] = parseDay(date);
  const z = new TZDate(y, m - 1, d, Math.floor(minute / 60), minute % 60, timeZone);
  const back = localParts(new Date(z.getTime()), timeZone);
  if (back.date !== date || back.minute !== minute) {
    // Minute 1440 is the next local midnight, which is a real instant.
    if (minute === 1440) return startOfLocalDay(addDays(date, 1), timeZone);
    return null;
  }
  return new Date(z.getTime());
}

/** Local midnight of `date` (midnight exists in every zone the practice can choose here). */
export function startOfLocalDay(date: string, timeZone: string): Date {
  const [y, m, d] = parseDay(date);
  return new Date(new TZDate(y, m - 1, d, 0, 0, timeZone).getTime());
}

/** `date` plus `days` calendar days (pure date arithmetic, no time zone involved). */
export function addDays(date: string, days: number): string {
  const [y, m, d] = parseDay(date);
  const t = new Date(Date.UTC(y, m - 1, d + days));
  return `${t.getUTCFullYear()}-${pad(t.getUTCMonth() + 1)}-${pad(t.getUTCDate())}`;
}

/** ISO weekday of a calendar day. */
export function weekdayOf(date: string): number {
  const [y, m, d] = parseDay(date);
  const js = new Date(Date.UTC(y, m - 1, d)).getUTCDay();
  return js === 0 ? 7 : js;
}

/** [start, end) of a local day: 24 hours, or 23 / 25 on the days the clocks change. */
export function localDayRange(date: string, timeZone: string): { start: Date; end: Date } {
  return { start: startOfLocalDay(date, timeZone), end: startOfLocalDay(addDays(date, 1), timeZone) };
}

/** The Monday that starts the ISO week holding `date`. */
export function startOfWeek(date: string): string {
  return addDays(date, 1 - weekdayOf(date));
}

/** "HH:MM" ↔ minutes after midnight. */
export function minutesToHhmm(minute: number): string {
  return `${pad(Math.floor(minute / 60))}:${pad(minute % 60)}`;
}
export function hhmmToMinutes(value: string): number | null {
  const m = /^([01]\d|2[0-4]):([0-5]\d)$/.exec(value.trim());
  if (!m) return null;
  const total = Number(m[1]) * 60 + Number(m[2]);
  return total <= 1440 ? total : null;
}

/** ISO 8601 with the zone's own offset, e.g. 2027-03-29T09:00:00+01:00 (what the calendar API returns). */
export function toZonedIso(at: Date, timeZone: string): string {
  return new TZDate(at.getTime(), timeZone).toISOString().replace(/\.000(?=[+-]|Z)/, "");
}

/** "Mon 29 Mar 2027, 09:00" in the practice's zone. */
export function formatLocal(at: Date, timeZone: string, opts: { withDate?: boolean } = {}): string {
  const time = dateTimeFormat("en-GB", {
    timeZone,
    hour: "2-digit",
    minute: "2-digit",
    hourCycle: "h23",
  }).format(at);
  if (opts.withDate === false) return time;
  const parts = dateTimeFormat("en-GB", {
    timeZone,
    weekday: "short",
    day: "numeric",
    month: "short",
    year: "numeric",
  }).formatToParts(at);
  const part = (type: string) => parts.find((p) => p.type === type)?.value ?? "";
  return `${part("weekday")} ${part("day")} ${part("month")} ${part("year")}, ${time}`;
}

export function isValidTimeZone(tz: string): boolean {
  try {
    new Intl.DateTimeFormat("en-GB", { timeZone: tz });
    return true;
  } catch {
    return false;
  }
}

/**
 * A fast `toZonedIso` for many instants: the zone's offset is looked up once per quarter hour of
 * UTC (offsets only change on quarter hours), so a week of events costs a few hundred look-ups.
 */
export function zonedIsoFormatter(timeZone: string): (ms: number) => string {
  const fmt = dateTimeFormat("en-GB", {
    timeZone,
    year: "numeric",
    month: "2-digit",
    day: "2-digit",
    hour: "2-digit",
    minute: "2-digit",
    hourCycle: "h23",
  });
  const cache = new Map<number, number>();
  const offsetMinutes = (ms: number) => {
    // Offsets change on whole quarter hours of UTC; keying by quarter hour is exact for every zone.
    const q = Math.floor(ms / 900_000);
    let o = cache.get(q);
    if (o === undefined) {
      const p: Record<string, string> = {};
      for (const part of fmt.formatToParts(new Date(q * 900_000))) p[part.type] = part.value;
      o = Math.round((Date.UTC(+p.year!, +p.month! - 1, +p.day!, +p.hour! % 24, +p.minute!) - q * 900_000) / 60_000);
      cache.set(q, o);
    }
    return o;
  };
  return (ms: number) => {
    const o = offsetMinutes(ms);
    const a = Math.abs(o);
    return `${new Date(ms + o * 60_000).toISOString().slice(0, 19)}${o >= 0 ? "+" : "-"}${pad(Math.floor(a / 60))}:${pad(a % 60)}`;
  };
}
