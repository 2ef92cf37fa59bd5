/**
 * How the app writes dates, ages and money for people: one formatter each, pure, the same on the
 * server and in the browser (so a page never hydrates with other text than it was rendered with).
 */
import { dateTimeFormat, numberFormat } from "./intl";
import { minorUnitDigits } from "~/lib/money";

const LOCALE = "en-GB";

export type DateStyle = "medium" | "long" | "full";

const DATE_PARTS: Record<DateStyle, Intl.DateTimeFormatOptions> = {
  medium: { day: "numeric", month: "short", year: "numeric" },
  long: { day: "numeric", month: "long", year: "numeric" },
  full: { weekday: "long", day: "numeric", month: "long", year: "numeric" },
};

const CALENDAR_DATE = /^\d{4}-\d{2}-\d{2}$/;

/**
 * A date for people: "9 Mar 2011" (medium), "9 March 2011" (long), "Wednesday, 9 March 2011" (full),
 * with `time` the wall-clock time after it ("9 Mar 2011, 14:05").
 *
 * A calendar date ("2011-03-09", e.g. a date of birth) has no time zone and is written as it is.
 * An instant (a `Date` or an ISO timestamp) is written on the wall clock of `timeZone`, the
 * practice's zone; without one, in UTC, never the zone of whichever computer renders it.
 */
export function formatDate(
  value: Date | string,
  { timeZone = "UTC", style = "medium", time = false }: { timeZone?: string; style?: DateStyle; time?: boolean } = {},
): string {
  // A string the platform cannot read as an instant but that starts with a calendar date is that date.
  const calendar =
    typeof value === "string" &&
    (CALENDAR_DATE.test(value) || (Number.isNaN(Date.parse(value)) && CALENDAR_DATE.test(value.slice(0, 10))));
  const at = calendar
    ? new Date(`${value.slice(0, 10)}T12:00:00Z`)
    : typeof value === "string"
      ? new Date(value)
      : value;
  if (Number.isNaN(at.getTime())) throw new RangeError(`Not a date: ${String(value)}`);
  return dateTimeFormat(LOCALE, {
    ...DATE_PARTS[style],
    ...(time && !calendar ? { hour: "2-digit", minute: "2-digit", hourCycle: "h23" } : {}),
    timeZone: calendar ? "UTC" : timeZone,
  }).format(at);
}

function parts(iso: string): [number, number, number] {
  const m = /^(\d{4})-(\d{2})-(\d{2})/.exec(iso);
  if (!m) throw new RangeError(`Not a date: ${iso}`);
  return [Number(m[1]), Number(m[2]), Number(m[3])];
}

/** Today's calendar date in `timeZone` (UTC by default), as YYYY-MM-DD. */
export function calendarDateIn(at: Date, timeZone = "UTC"): string {
  return dateTimeFormat("en-CA", { timeZone, year: "numeric", month: "2-digit", day: "2-digit" }).format(at);
}

/**
 * Whole years of age on `on` (both calendar dates): the count goes up on the birthday, and a
 * birthday on 29 February counts from 1 March in other years.
 */
export function ageInYears(dateOfBirth: string, on: string = calendarDateIn(new Date())): number {
  const [by, bm, bd] = parts(dateOfBirth);
  const [y, m, d] = parts(on);
  return y - by - (m < bm || (m === bm && d < bd) ? 1 : 0);
}

/** "41 years", "1 year"; under two years in months ("18 months", "1 month", "0 months"). */
export function formatAge(dateOfBirth: string, on: string = calendarDateIn(new Date())): string {
  const years = ageInYears(dateOfBirth, on);
  if (years >= 2) return `${years} years`;
  const [by, bm, bd] = parts(dateOfBirth);
  const [y, m, d] = parts(on);
  const months = Math.max(0, (y - by) * 12 + (m - bm) - (d < bd ? 1 : 0));
  return months === 1 ? "1 month" : `${months} months`;
}

/**
 * "£12.50": integer minor units in the practice's currency, with that currency's own number of
 * decimals (none for yen, three for dinars).
 */
export function formatMoney(minor: number, currency: string): string {
  const digits = minorUnitDigits(currency);
  return numberFormat(LOCALE, {
    style: "currency",
    currency,
    minimumFractionDigits: digits,
    maximumFractionDigits: digits,
  }).format(minor / 10 ** digits);
}
