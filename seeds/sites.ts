/**
 * The demo practice's two sites: the main one on Larkspur Lane (the default, open six days) and
 * a part-time one on Hillcrest Parade (Tuesdays and Thursdays), each with its rooms. Fictional.
 * Idempotent: the default site the migration made is filled in once; the rest is added when missing.
 */
import { eq, sql } from "drizzle-orm";
import type { NodePgDatabase } from "drizzle-orm/node-postgres";
import * as schema from "../app/db/schema";
import { DEMO_PRACTICE } from "./demo-practice";

const { rooms, siteOpeningHours, sites } = schema;
type Tx = Parameters<Parameters<NodePgDatabase<typeof schema>["transaction"]>[0]>[0];

export const DEMO_SITES = {
  main: { name: "Larkspur Lane", rooms: ["Room 1", "Room 2"] },
  second: {
    name: "Hillcrest Parade",
    addressLine1: "3 Hillcrest Parade",
    addressLine2: "",
    city: "Brackenford",
    postcode: "BF6 2HP",
    phone: "01632 960 733",
    rooms: ["Consulting room"],
  },
} as const;

export async function seedSites(tx: Tx) {
  let [main] = await tx.select().from(sites).where(eq(sites.isDefault, true));
  if (main && main.name === "Main site") {
    [main] = await tx
      .update(sites)
      .set({
        name: DEMO_SITES.main.name,
        addressLine1: DEMO_PRACTICE.addressLine1,
        addressLine2: DEMO_PRACTICE.addressLine2,
        city: DEMO_PRACTICE.city,
        postcode: DEMO_PRACTICE.postcode,
        phone: DEMO_PRACTICE.phone,
        timeZone: DEMO_PRACTICE.timeZone,
      })
      .where(eq(sites.id, main.id))
      .returning();
  }
  if (!main) return;
  let [second] = await tx
    .select()
    .from(sites)
    .where(sql`lower(${sites.name}) = lower(${DEMO_SITES.second.name})`);
  if (!second) {
    const { rooms: _r, ...details } = DEMO_SITES.second;
    [second] = await tx
      .insert(sites)
      .values({ ...details, timeZone: DEMO_PRACTICE.timeZone })
      .returning();
  }
  // Opening hours: the main site Monday to Saturday 08:00–19:00; Hillcrest Tuesdays and Thursdays 09:00–17:30.
  const [{ n } = { n: 0 }] = await tx.select({ n: sql<number>`count(*)::int` }).from(siteOpeningHours);
  if (n === 0) {
    await tx
      .insert(siteOpeningHours)
      .values(
        [1, 2, 3, 4, 5, 6].map((weekday) => ({ siteId: main!.id, weekday, startMinute: 8 * 60, endMinute: 19 * 60 })),
      );
    await tx
      .insert(siteOpeningHours)
      .values([2, 4].map((weekday) => ({ siteId: second!.id, weekday, startMinute: 9 * 60, endMinute: 17 * 60 + 30 })));
  }
  const [{ r } = { r: 0 }] = await tx.select({ r: sql<number>`count(*)::int` }).from(rooms);
  if (r === 0) {
    await tx.insert(rooms).values(DEMO_SITES.main.rooms.map((name) => ({ siteId: main!.id, name })));
    await tx.insert(rooms).values(DEMO_SITES.second.rooms.map((name) => ({ siteId: second!.id, name })));
  }
  return { main, second: second! };
}
