import { sql } from "drizzle-orm";
import {
  boolean,
  check,
  index,
  integer,
  pgTable,
  text,
  timestamp,
  unique,
  uniqueIndex,
  uuid,
} from "drizzle-orm/pg-core";

/**
 * The practice's sites (locations). Exactly one is the default: rows written without a site
 * (older code paths, a single-site practice) land there through the `default_site_id()` column
 * default, so a practice with one site never has to choose one.
 */
export const sites = pgTable(
  "sites",
  {
    id: uuid().primaryKey().defaultRandom(),
    name: text().notNull(),
    addressLine1: text().notNull().default(""),
    addressLine2: text().notNull().default(""),
    city: text().notNull().default(""),
    postcode: text().notNull().default(""),
    phone: text().notNull().default(""),
    /** IANA zone of the site's wall clock (working hours and bookings there). */
    timeZone: text().notNull().default("Europe/London"),
    isDefault: boolean().notNull().default(false),
    active: boolean().notNull().default(true),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    uniqueIndex("sites_one_default_uq")
      .on(t.isDefault)
      .where(sql`${t.isDefault}`),
    uniqueIndex("sites_name_uq").on(sql`lower(${t.name})`),
    check("sites_default_is_active", sql`not ${t.isDefault} or ${t.active}`),
  ],
);

/** When a site's doors are open, per ISO weekday (1 = Monday), minutes after local midnight. No row: closed. */
export const siteOpeningHours = pgTable(
  "site_opening_hours",
  {
    id: uuid().primaryKey().defaultRandom(),
    siteId: uuid()
      .notNull()
      .references(() => sites.id, { onDelete: "cascade" }),
    weekday: integer().notNull(),
    startMinute: integer().notNull(),
    endMinute: integer().notNull(),
  },
  (t) => [
    uniqueIndex("site_opening_hours_site_day_uq").on(t.siteId, t.weekday),
    check("site_opening_hours_weekday", sql`${t.weekday} between 1 and 7`),
    check(
      "site_opening_hours_span",
      sql`${t.startMinute} >= 0 and ${t.endMinute} <= 1440 and ${t.endMinute} > ${t.startMinute}`,
    ),
  ],
);

/** A consulting or testing room at a site. (id, site_id) is unique so appointments can prove their room is at their site. */
export const rooms = pgTable(
  "rooms",
  {
    id: uuid().primaryKey().defaultRandom(),
    siteId: uuid()
      .notNull()
      .references(() => sites.id, { onDelete: "cascade" }),
    name: text().notNull(),
    active: boolean().notNull().default(true),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    unique("rooms_id_site_uq").on(t.id, t.siteId),
    uniqueIndex("rooms_site_name_uq").on(t.siteId, sql`lower(${t.name})`),
    index("rooms_site_idx").on(t.siteId),
  ],
);

/** Column default of every `site_id`: the practice's default site (see the migration that creates the function). */
export const defaultSiteId = sql`default_site_id()`;
