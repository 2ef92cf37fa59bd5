/**
 * The demo practice's fee schedule: our own codes and invented prices (before tax, in pence).
 * Other seeds may link appointment types to these codes (DEMO_FEE_CODES).
 */
import { sql } from "drizzle-orm";
import type { NodePgDatabase } from "drizzle-orm/node-postgres";
import * as schema from "../app/db/schema";

const { feeItems, practiceSettings } = schema;

export const DEMO_FEE_CODES = { adultExam: "EXAM-A", childExam: "EXAM-C", contactLensFit: "CL-FIT" } as const;

// Exams and fittings exempt, dispensed goods standard-rated (common practice in the UK; local tax law governs).
export const DEMO_FEES = [
  { code: "EXAM-A", description: "Eye examination, adult", priceMinor: 6500, kind: "service", taxCategory: "exempt" },
  { code: "EXAM-C", description: "Eye examination, child", priceMinor: 4000, kind: "service", taxCategory: "exempt" },
  { code: "CL-FIT", description: "Contact lens fitting", priceMinor: 5500, kind: "service", taxCategory: "exempt" },
  {
    code: "CL-CHK",
    description: "Contact lens aftercare check",
    priceMinor: 3000,
    kind: "service",
    taxCategory: "exempt",
  },
  { code: "OCT", description: "Retinal scan (OCT)", priceMinor: 3500, kind: "service", taxCategory: "exempt" },
  { code: "FR-STD", description: "Frame, everyday range", priceMinor: 8900, kind: "item", taxCategory: "standard" },
  { code: "LN-SV", description: "Single-vision lenses, pair", priceMinor: 6000, kind: "item", taxCategory: "standard" },
  {
    code: "SOL-360",
    description: "Contact lens solution, 360 ml",
    priceMinor: 899,
    kind: "item",
    taxCategory: "standard",
  },
] as const;

type Tx = Parameters<Parameters<NodePgDatabase<typeof schema>["transaction"]>[0]>[0];

/** Idempotent: adds the fees missing by code; the first time, sets the demo tax rate (20 %). */
export async function seedBilling(tx: Tx) {
  const [{ n } = { n: 0 }] = await tx.select({ n: sql<number>`count(*)::int` }).from(feeItems);
  await tx
    .insert(feeItems)
    .values(DEMO_FEES.map((f) => ({ ...f })))
    .onConflictDoNothing();
  if (n === 0)
    await tx
      .update(practiceSettings)
      .set({ taxRateBp: 2000 })
      .where(sql`${practiceSettings.id} = 1`);
}
