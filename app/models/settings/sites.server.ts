import { and, asc, eq, ne, sql } from "drizzle-orm";
import { rooms, siteOpeningHours, sites } from "~/db/schema";
import { WEEKDAY_NAMES } from "~/lib/scheduling/hours";
import { minutesToHhmm } from "~/lib/scheduling/time";
import { db } from "~/utils/db.server";
import { siteAddress, siteChangeConflicts } from "~/models/schedule/sites.server";
import { auditedWrite, type Actor } from "./audited.server";

export type SiteDetails = Pick<
  typeof sites.$inferInsert,
  "name" | "addressLine1" | "addressLine2" | "city" | "postcode" | "phone" | "timeZone"
>;
export type SiteHours = { weekday: number; startMinute: number; endMinute: number };
export type RoomChange = { id: string; name: string; active: boolean };
type SiteRow = typeof sites.$inferSelect;
type RoomRow = typeof rooms.$inferSelect;

/**
 * The practice's sites, and the one asked for (`?site=`; "new" for none, else the default)
 * with its opening hours by weekday and its rooms.
 */
export async function sitesPage(asked: string | null) {
  const list = await db.select().from(sites).orderBy(asc(sites.name));
  const current = asked === "new" ? null : (list.find((s) => s.id === asked) ?? list.find((s) => s.isDefault) ?? null);
  const hours = current ? await db.select().from(siteOpeningHours).where(eq(siteOpeningHours.siteId, current.id)) : [];
  const siteRooms = current
    ? await db.select().from(rooms).where(eq(rooms.siteId, current.id)).orderBy(asc(rooms.name))
    : [];
  return {
    sites: list.map((s) => ({
      id: s.id,
      name: s.name,
      isDefault: s.isDefault,
      active: s.active,
      address: siteAddress(s),
    })),
    current: current
      ? {
          id: current.id,
          name: current.name,
          addressLine1: current.addressLine1,
          addressLine2: current.addressLine2,
          city: current.city,
          postcode: current.postcode,
          phone: current.phone,
          timeZone: current.timeZone,
          isDefault: current.isDefault,
          active: current.active,
        }
      : null,
    days: WEEKDAY_NAMES.map((name, i) => {
      const h = hours.find((x) => x.weekday === i + 1);
      return {
        weekday: i + 1,
        name,
        open: h ? minutesToHhmm(h.startMinute) : "",
        close: h ? minutesToHhmm(h.endMinute) : "",
      };
    }),
    rooms: siteRooms.map((r) => ({ id: r.id, name: r.name, active: r.active })),
  };
}

/** The site to change and its rooms; null when there is no such site. */
export async function siteToChange(id: string): Promise<{ site: SiteRow; rooms: RoomRow[] } | null> {
  const [site] = await db.select().from(sites).where(eq(sites.id, id));
  if (!site) return null;
  return { site, rooms: await db.select().from(rooms).where(eq(rooms.siteId, site.id)) };
}

/**
 * What refuses a change to a site (`before`, or a new site when null), keyed as the form names its
 * fields: providers' working days it would strand, giving up the default, a name another site has.
 */
export async function siteChangeRefusals(
  before: SiteRow | null,
  change: { name: string; active: boolean; isDefault: boolean; hours: SiteHours[]; roomChanges: RoomChange[] },
) {
  const errors: Record<string, string[]> = {};
  if (before) {
    // Providers' working days point at the site and its rooms: changing them first would strand those days.
    Object.assign(
      errors,
      await siteChangeConflicts(before.id, {
        active: change.active,
        hours: change.hours,
        closingRoomIds: change.roomChanges.filter((r) => !r.active).map((r) => r.id),
      }),
    );
    if (before.isDefault && !change.isDefault)
      errors.isDefault = ["Make another site the default instead; the practice always has one."];
  }
  if (change.name) {
    const [clash] = await db
      .select({ id: sites.id })
      .from(sites)
      .where(and(sql`lower(${sites.name}) = lower(${change.name})`, before ? ne(sites.id, before.id) : undefined));
    if (clash) errors.name = ["Another site already has this name."];
  }
  return errors;
}

/**
 * Adds a site, or changes `before`: its details, opening hours and rooms, in one transaction with
 * its audit row. A new default takes the mark from the old one. Answers the site's id.
 */
export async function saveSite(
  before: SiteRow | null,
  input: {
    details: SiteDetails;
    isDefault: boolean;
    active: boolean;
    hours: SiteHours[];
    roomChanges: RoomChange[];
    newRoom: string;
  },
  actor: Actor,
): Promise<string> {
  const { details, isDefault, active, hours, roomChanges, newRoom } = input;
  const values = { ...details, isDefault, active, updatedAt: new Date() };
  const row = await auditedWrite(
    {
      action: before ? "site.changed" : "site.added",
      entityType: "site",
      detail: { ...values, hours, rooms: roomChanges, newRoom },
    },
    actor,
    async (tx) => {
      if (isDefault)
        await tx
          .update(sites)
          .set({ isDefault: false })
          .where(and(eq(sites.isDefault, true), before ? ne(sites.id, before.id) : undefined));
      const [row] = before
        ? await tx.update(sites).set(values).where(eq(sites.id, before.id)).returning()
        : await tx.insert(sites).values(values).returning();
      await tx.delete(siteOpeningHours).where(eq(siteOpeningHours.siteId, row!.id));
      if (hours.length) await tx.insert(siteOpeningHours).values(hours.map((h) => ({ ...h, siteId: row!.id })));
      for (const r of roomChanges)
        await tx.update(rooms).set({ name: r.name, active: r.active }).where(eq(rooms.id, r.id));
      if (newRoom) await tx.insert(rooms).values({ siteId: row!.id, name: newRoom });
      return row!;
    },
  );
  return row!.id;
}
