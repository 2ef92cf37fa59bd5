/**
 * Working hours and breaks: may a provider be booked from `start` to `end`?
 * Spans are minutes after local midnight on an ISO weekday, in the practice's time zone.
 */
import { localParts, minutesToHhmm, wallTimeToInstant, weekdayOf } from "./time";

export type DaySpan = { weekday: number; startMinute: number; endMinute: number };
export type BreakSpan = DaySpan & { label?: string };

export const WEEKDAY_NAMES = ["Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday"] as const;

export type HoursCheck = { ok: true } | { ok: false; reason: string };

/** Whether [start, end) lies inside the provider's working span of that local day and clear of its breaks. */
export function checkWorkingHours(
  start: Date,
  end: Date,
  timeZone: string,
  hours: readonly DaySpan[],
  breaks: readonly BreakSpan[] = [],
): HoursCheck {
  return checkSpan(start, end, timeZone, hours, breaks, {
    closedDay: (day) => `The provider does not work on ${day}s.`,
    outside: (day, span) => `Outside the provider's working hours on ${day} (${span}).`,
  });
}

/**
 * Whether [start, end) lies inside the site's opening hours that day. A site with no opening
 * hours at all has not had them set yet and does not limit bookings; once any day is set, a day
 * without hours is a closed day.
 */
export function checkOpeningHours(
  start: Date,
  end: Date,
  timeZone: string,
  opening: readonly DaySpan[],
  siteName: string,
): HoursCheck {
  if (!opening.length) return { ok: true };
  return checkSpan(start, end, timeZone, opening, [], {
    closedDay: (day) => `${siteName} is closed on ${day}s. Choose another day.`,
    outside: (day, span) => `${siteName} is open ${span} on ${day}s; choose a time inside the opening hours.`,
  });
}

/** Whether a provider's working span fits inside the site's opening span that weekday (the same rule as above, for settings). */
export function fitsOpeningHours(span: DaySpan, opening: readonly DaySpan[], siteName: string): HoursCheck {
  if (!opening.length) return { ok: true };
  const dayName = WEEKDAY_NAMES[span.weekday - 1] ?? "";
  const open = opening.find((o) => o.weekday === span.weekday);
  if (!open) return { ok: false, reason: `${siteName} is closed on ${dayName}s (see Settings → Sites and rooms).` };
  if (span.startMinute < open.startMinute || span.endMinute > open.endMinute)
    return {
      ok: false,
      reason: `${siteName} is open ${minutesToHhmm(open.startMinute)}–${minutesToHhmm(open.endMinute)} on ${dayName}s; working hours must fit inside.`,
    };
  return { ok: true };
}

type SpanWords = { closedDay: (dayName: string) => string; outside: (dayName: string, span: string) => string };

function checkSpan(
  start: Date,
  end: Date,
  timeZone: string,
  hours: readonly DaySpan[],
  breaks: readonly BreakSpan[],
  words: SpanWords,
): HoursCheck {
  const s = localParts(start, timeZone);
  const e = localParts(end, timeZone);
  // An appointment ending at local midnight belongs to the day it started.
  const endsAtMidnight = e.minute === 0 && e.date !== s.date;
  const endMinute = endsAtMidnight ? 1440 : e.minute;
  if (e.date !== s.date && !endsAtMidnight)
    return { ok: false, reason: "An appointment must start and end on the same day." };
  const day = hours.find((h) => h.weekday === s.weekday);
  const dayName = WEEKDAY_NAMES[s.weekday - 1] ?? "";
  if (!day) return { ok: false, reason: words.closedDay(dayName) };
  // Compare instants, not minute numbers, so a span on a day the clocks change is measured truly.
  const open = wallTimeToInstant(s.date, day.startMinute, timeZone);
  const close = wallTimeToInstant(s.date, day.endMinute, timeZone);
  if ((open && start < open) || (close && end > close) || s.minute < day.startMinute || endMinute > day.endMinute) {
    return {
      ok: false,
      reason: words.outside(dayName, `${minutesToHhmm(day.startMinute)}–${minutesToHhmm(day.endMinute)}`),
    };
  }
  for (const b of breaks) {
    if (b.weekday !== s.weekday) continue;
    if (s.minute < b.endMinute && endMinute > b.startMinute) {
      return {
        ok: false,
        reason: `Overlaps the provider's ${b.label ? b.label.toLowerCase() : "break"} (${minutesToHhmm(b.startMinute)}–${minutesToHhmm(b.endMinute)}).`,
      };
    }
  }
  return { ok: true };
}

/**
 * The bookable start instants of a local day: every `stepMinutes` from the working span's start,
 * long enough for `durationMinutes`, clear of breaks. Times that do not exist that day are left out.
 */
export function slotsForDay(
  date: string,
  timeZone: string,
  hours: readonly DaySpan[],
  breaks: readonly BreakSpan[],
  durationMinutes: number,
  stepMinutes = durationMinutes,
): Date[] {
  const weekday = weekdayOf(date);
  const day = hours.find((h) => h.weekday === weekday);
  if (!day) return [];
  const out: Date[] = [];
  for (let m = day.startMinute; m + durationMinutes <= day.endMinute; m += stepMinutes) {
    if (breaks.some((b) => b.weekday === weekday && m < b.endMinute && m + durationMinutes > b.startMinute)) continue;
    const at = wallTimeToInstant(date, m, timeZone);
    if (at) out.push(at);
  }
  return out;
}
