/**
 * The practice's sites and rooms, and the site a user last chose for the calendar and the day
 * list (kept in a cookie, so no app server holds it).
 */
import { and, asc, eq, sql } from "drizzle-orm";
import { createCookie } from "react-router";
import { practiceSettings, rooms, siteOpeningHours, sites, users, workingHours } from "~/db/schema";
import { WEEKDAY_NAMES } from "~/lib/scheduling/hours";
import { minutesToHhmm } from "~/lib/scheduling/time";
import { db } from "~/utils/db.server";
import { env } from "~/utils/env.server";

export type SiteOption = { id: string; name: string; isDefault: boolean; timeZone: string };

/** Active sites, the default first. */
export async function activeSites(): Promise<SiteOption[]> {
  const rows = await db
    .select({ id: sites.id, name: sites.name, isDefault: sites.isDefault, timeZone: sites.timeZone })
    .from(sites)
    .where(eq(sites.active, true))
    .orderBy(asc(sites.isDefault), asc(sites.name));
  return rows.sort((a, b) => Number(b.isDefault) - Number(a.isDefault));
}

export async function defaultSite() {
  const [row] = await db.select().from(sites).where(eq(sites.isDefault, true));
  if (!row) throw new Error("The practice has no default site");
  return row;
}

/** Active rooms by site. */
export async function activeRooms() {
  return db
    .select({ id: rooms.id, siteId: rooms.siteId, name: rooms.name })
    .from(rooms)
    .where(eq(rooms.active, true))
    .orderBy(asc(rooms.name));
}

export async function siteWithDetails(id: string) {
  const [site] = await db.select().from(sites).where(eq(sites.id, id));
  if (!site) return null;
  const hours = await db.select().from(siteOpeningHours).where(eq(siteOpeningHours.siteId, id));
  const siteRooms = await db
    .select()
    .from(rooms)
    .where(and(eq(rooms.siteId, id)))
    .orderBy(asc(rooms.name));
  return { site, hours, rooms: siteRooms };
}

/** The wall clock of a page filtered to `site` (an id or "all"): that site's zone, else the practice's. */
export function zoneOfChoice(site: string, options: SiteOption[], practiceZone: string) {
  return options.find((s) => s.id === site)?.timeZone ?? practiceZone;
}

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

/** The time zone of the site with this id, where a booking's wall times are read; null for no such site. */
export async function siteTimeZone(id: unknown): Promise<string | null> {
  if (typeof id !== "string" || !UUID.test(id)) return null;
  const [row] = await db.select({ timeZone: sites.timeZone }).from(sites).where(eq(sites.id, id));
  return row?.timeZone ?? null;
}

/**
 * In a query that left-joins `sites`: that site's time zone, else the practice's (a row with no
 * site). A visit's date is written as its site's clock reads it.
 */
export const siteOrPracticeZone = sql<string>`coalesce(${sites.timeZone}, (select ${practiceSettings.timeZone} from ${practiceSettings} where ${practiceSettings.id} = 1))`;

/** One line of a site's address, for e-mails and documents. */
export function siteAddress(s: { addressLine1: string; addressLine2: string; city: string; postcode: string }) {
  return [s.addressLine1, s.addressLine2, s.city, s.postcode].filter(Boolean).join(", ");
}

const siteCookie = createCookie("dioptra_site", {
  path: "/",
  httpOnly: true,
  sameSite: "lax",
  secure: env.APP_URL.startsWith("https://"),
  maxAge: 60 * 60 * 24 * 365,
});

/**
 * The site filter of the calendar and the day list: `?site=` (an id or "all") when given,
 * else the user's last choice from the cookie, else the whole practice. With one site there is
 * nothing to choose. Returns the choice and the Set-Cookie header to remember it (or null).
 */
export async function siteChoice(
  request: Request,
  options: SiteOption[],
): Promise<{ site: string; setCookie: string | null }> {
  const asked = new URL(request.url).searchParams.get("site");
  const valid = (v: unknown): v is string => v === "all" || options.some((s) => s.id === v);
  if (options.length <= 1) return { site: "all", setCookie: null };
  if (asked !== null && valid(asked)) return { site: asked, setCookie: await siteCookie.serialize(asked) };
  const remembered = await siteCookie.parse(request.headers.get("cookie"));
  return { site: valid(remembered) ? remembered : "all", setCookie: null };
}

type DaySpanRow = { weekday: number; startMinute: number; endMinute: number };

/**
 * What a change to a site would strand: providers' working days there that a closed site, a day
 * without opening hours, opening hours that no longer cover them, or a room taken out of use
 * would leave outside. Answers field errors keyed as the sites form names its fields.
 */
export async function siteChangeConflicts(
  siteId: string,
  change: { active: boolean; hours: DaySpanRow[]; closingRoomIds: string[] },
) {
  const errors: Record<string, string[]> = {};
  const working = await db
    .select({
      name: users.name,
      weekday: workingHours.weekday,
      roomId: workingHours.roomId,
      startMinute: workingHours.startMinute,
      endMinute: workingHours.endMinute,
    })
    .from(workingHours)
    .innerJoin(users, eq(users.id, workingHours.providerId))
    .where(eq(workingHours.siteId, siteId));
  if (!change.active && working.length)
    errors.active = [
      `${working[0]!.name} works here on ${WEEKDAY_NAMES[working[0]!.weekday - 1]}s; move their working hours to another site first (Settings → Working hours).`,
    ];
  for (const w of working) {
    const dayName = WEEKDAY_NAMES[w.weekday - 1];
    const day = change.hours.find((h) => h.weekday === w.weekday);
    if (change.hours.length && !day)
      errors[`hours-${w.weekday}`] = [
        `${w.name} works here on ${dayName}s; change their working hours before closing that day.`,
      ];
    else if (day && (w.startMinute < day.startMinute || w.endMinute > day.endMinute))
      errors[`hours-${w.weekday}`] = [
        `${w.name} works here ${minutesToHhmm(w.startMinute)}–${minutesToHhmm(w.endMinute)} on ${dayName}s; the opening hours must cover that, or change their working hours first.`,
      ];
    if (w.roomId && change.closingRoomIds.includes(w.roomId))
      errors[`room-${w.roomId}`] = [`${w.name} uses this room on ${dayName}s.`];
  }
  return errors;
}
