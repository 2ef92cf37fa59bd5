import { and, inArray, sql } from "drizzle-orm";
import type { NodePgDatabase } from "drizzle-orm/node-postgres";
import * as schema from "../app/db/schema";

type Tx = Parameters<Parameters<NodePgDatabase<typeof schema>["transaction"]>[0]>[0];

/** In the demo practice, routine exams are open to online booking from the patient portal. */
export const ONLINE_BOOKABLE = ["Comprehensive eye exam", "Contact lens check"];

/**
 * Opens the demo's routine visit types to online booking when this same seeding transaction
 * created them (now() is the transaction's start), so an owner's later choice is never undone.
 */
export async function seedPortal(tx: Tx) {
  const { appointmentTypes } = schema;
  await tx
    .update(appointmentTypes)
    .set({ onlineBooking: true })
    .where(and(inArray(appointmentTypes.name, ONLINE_BOOKABLE), sql`${appointmentTypes.createdAt} = now()`));
}
