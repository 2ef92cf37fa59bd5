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
  const s = localParts(start, timeZone);
  const e = localParts(end, timeZone);
  // An appointment ending at local midnight belongs to the day it started.
  const endsAtMidnight = e.minute === 0 && e.date !== s.date;
  const endMinute = endsAtMidnight ? 1440 : e.minute;
  if (e.date !== s.date && !endsAtMidnight)
    return { ok: false, reason: "An appointment must start and end on the same day." };
  const day = hours.find((h) => h.weekday === s.weekday);
  const dayName = WEEKDAY_NAMES[s.weekday - 1];
  if (!day) return { ok: false, reason: `The provider does not work on ${dayName}s.` };
  // Compare instants, not minute numbers, so a span on a day the clocks change is measured truly.
  const open = wallTimeToInstant(s.date, day.startMinute, timeZone);
  const close = wallTimeToInstant(s.date, day.endMinute, timeZone);
  if ((open && start < open) || (close && end > close) || s.minute < day.startMinute || endMinute > day.endMinute) {
    return {
      ok: false,
      reason: `Outside the provider's working hours on ${dayName} (${minutesToHhmm(day.startMinute)}–${minutesToHhmm(day.endMinute)}).`,
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
