import { sql } from "drizzle-orm";
import { boolean, check, integer, pgTable, text, timestamp, uniqueIndex, uuid } from "drizzle-orm/pg-core";

/** The practice's fee schedule: codes of its own, prices in the currency's minor unit. */
export const feeItems = pgTable(
  "fee_items",
  {
    id: uuid().primaryKey().defaultRandom(),
    code: text().notNull(),
    description: text().notNull(),
    /** Price in minor units (pence, cents) of practice_settings.currency. */
    priceMinor: integer().notNull(),
    /** "service" (exam, fitting) or "item" (frames, lenses, solutions). */
    kind: text({ enum: ["service", "item"] }).notNull().default("service"),
    active: boolean().notNull().default(true),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [uniqueIndex("fee_items_code_uq").on(sql`lower(${t.code})`), check("fee_items_price_nonneg", sql`${t.priceMinor} >= 0`)],
);
