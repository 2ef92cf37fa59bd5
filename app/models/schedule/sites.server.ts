/**
 * The practice's sites and rooms, and the site a user last chose for the calendar and the day
 * list (kept in a cookie, so no app server holds it).
 */
import { and, asc, eq } from "drizzle-orm";
import { createCookie } from "react-router";
import { rooms, siteOpeningHours, sites } from "~/db/schema";
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
