import { sql } from "drizzle-orm";
import { check, integer, pgEnum, pgTable, text, timestamp } from "drizzle-orm/pg-core";

/** How the practice writes distance acuity: metric Snellen (6/6), feet (20/20), decimal (1.0) or logMAR (0.00). */
export const acuityNotationEnum = pgEnum("acuity_notation", ["metric", "feet", "decimal", "logmar"]);
export type AcuityNotation = (typeof acuityNotationEnum.enumValues)[number];
/** Where the practice works: chooses the dispensing standard, registration wording and acuity notation (app/lib/optics/jurisdiction.ts). */
export const jurisdictionEnum = pgEnum("jurisdiction", ["uk", "us"]);

/** The practice's own details and policies; a single row (id = 1). */
export const practiceSettings = pgTable(
  "practice_settings",
  {
    id: integer().primaryKey().default(1),
    name: text().notNull(),
    addressLine1: text().notNull().default(""),
    addressLine2: text().notNull().default(""),
    city: text().notNull().default(""),
    postcode: text().notNull().default(""),
    phone: text().notNull().default(""),
    email: text().notNull().default(""),
    timeZone: text().notNull().default("Europe/London"),
    /** ISO 4217 code; amounts are stored in its minor unit. */
    currency: text().notNull().default("GBP"),
    jurisdiction: jurisdictionEnum().notNull().default("uk"),
    /** Validity of a spectacle prescription, months; local law governs. */
    spectacleRxValidityMonths: integer().notNull().default(24),
    contactLensRxValidityMonths: integer().notNull().default(12),
    /** Patients may cancel a visit from the portal until this many hours before it starts. */
    portalCancelCutoffHours: integer().notNull().default(24),
    /** Recall interval after a routine exam when the visit type sets none, months (common practice: 12 for children, 24 for adults). */
    recallMonthsChild: integer().notNull().default(12),
    recallMonthsAdult: integer().notNull().default(24),
    /** A patient younger than this, in whole years, on the day of the exam counts as a child for recalls (common practice: 16). */
    childUnderYears: integer().notNull().default(16),
    /** How long before an appointment its reminder e-mail goes out, hours. */
    reminderHoursBefore: integer().notNull().default(24),
    /** Tax on standard-rated invoice lines, basis points (2000 = 20 %); 0 = no tax. */
    taxRateBp: integer().notNull().default(0),
    /**
     * Days within which a referred patient should be seen, per urgency; past it the referral is
     * overdue. Defaults are common practice (same day, a week, four weeks, thirteen weeks); local
     * pathways govern.
     */
    referralDaysSameDay: integer().notNull().default(1),
    referralDaysUrgent: integer().notNull().default(7),
    referralDaysSoon: integer().notNull().default(28),
    referralDaysRoutine: integer().notNull().default(91),
    /** The notation acuity is typed in unless an entry says otherwise. */
    acuityNotation: acuityNotationEnum().notNull().default("metric"),
    /** How far ahead patients may book from the portal, days. */
    portalBookingDays: integer().notNull().default(90),
    /** How far ahead the practice team may book, days (two years covers the longest usual recall). */
    staffBookingDays: integer().notNull().default(730),
    /** An order still at the lab after this many days is reported overdue. */
    labOverdueDays: integer().notNull().default(10),
    updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    check("practice_settings_single_row", sql`${t.id} = 1`),
    check("practice_settings_tax_rate", sql`${t.taxRateBp} between 0 and 10000`),
    check(
      "practice_settings_rx_validity",
      sql`${t.spectacleRxValidityMonths} between 1 and 120 and ${t.contactLensRxValidityMonths} between 1 and 120`,
    ),
    check(
      "practice_settings_booking_days",
      sql`${t.portalBookingDays} between 1 and 3660 and ${t.staffBookingDays} between 1 and 3660`,
    ),
  ],
);
