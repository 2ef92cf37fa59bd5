/**
 * The demo practice's closures: the England and Wales bank holidays over the years the demo's
 * visits and booking horizon span. Idempotent (one row per date, kept by a unique index).
 *
 * Source: GOV.UK, "UK bank holidays", England and Wales (https://www.gov.uk/bank-holidays, also
 * published as https://www.gov.uk/bank-holidays.json). Substitute days are the observed dates.
 * 2025–2028 checked against a copy of that list; 2024 from memory of it.
 */
import type { NodePgDatabase } from "drizzle-orm/node-postgres";
import * as schema from "../app/db/schema";

const { closures } = schema;
type Tx = Parameters<Parameters<NodePgDatabase<typeof schema>["transaction"]>[0]>[0];

export const ENGLAND_AND_WALES_BANK_HOLIDAYS: readonly (readonly [string, string])[] = [
  ["2024-01-01", "New Year's Day"],
  ["2024-03-29", "Good Friday"],
  ["2024-04-01", "Easter Monday"],
  ["2024-05-06", "Early May bank holiday"],
  ["2024-05-27", "Spring bank holiday"],
  ["2024-08-26", "Summer bank holiday"],
  ["2024-12-25", "Christmas Day"],
  ["2024-12-26", "Boxing Day"],
  ["2025-01-01", "New Year's Day"],
  ["2025-04-18", "Good Friday"],
  ["2025-04-21", "Easter Monday"],
  ["2025-05-05", "Early May bank holiday"],
  ["2025-05-26", "Spring bank holiday"],
  ["2025-08-25", "Summer bank holiday"],
  ["2025-12-25", "Christmas Day"],
  ["2025-12-26", "Boxing Day"],
  ["2026-01-01", "New Year's Day"],
  ["2026-04-03", "Good Friday"],
  ["2026-04-06", "Easter Monday"],
  ["2026-05-04", "Early May bank holiday"],
  ["2026-05-25", "Spring bank holiday"],
  ["2026-08-31", "Summer bank holiday"],
  ["2026-12-25", "Christmas Day"],
  ["2026-12-28", "Boxing Day (substitute day)"],
  ["2027-01-01", "New Year's Day"],
  ["2027-03-26", "Good Friday"],
  ["2027-03-29", "Easter Monday"],
  ["2027-05-03", "Early May bank holiday"],
  ["2027-05-31", "Spring bank holiday"],
  ["2027-08-30", "Summer bank holiday"],
  ["2027-12-27", "Christmas Day (substitute day)"],
  ["2027-12-28", "Boxing Day (substitute day)"],
  ["2028-01-03", "New Year's Day (substitute day)"],
  ["2028-04-14", "Good Friday"],
  ["2028-04-17", "Easter Monday"],
  ["2028-05-01", "Early May bank holiday"],
  ["2028-05-29", "Spring bank holiday"],
  ["2028-08-28", "Summer bank holiday"],
  ["2028-12-25", "Christmas Day"],
  ["2028-12-26", "Boxing Day"],
];

export const isBankHoliday = (date: string) => ENGLAND_AND_WALES_BANK_HOLIDAYS.some(([d]) => d === date);

export async function seedClosures(tx: Tx) {
  await tx
    .insert(closures)
    .values(
      ENGLAND_AND_WALES_BANK_HOLIDAYS.map(([date, reason]) => ({
        kind: "bank_holiday" as const,
        startsOn: date,
        endsOn: date,
        reason,
      })),
    )
    .onConflictDoNothing();
}
