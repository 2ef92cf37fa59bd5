/**
 * The demo practice's contact-lens catalogue (fictional makers and lens names; generic
 * materials). Power ranges and steps are typical of soft lenses (common practice), for the demo
 * only.
 */
import { sql } from "drizzle-orm";
import type { NodePgDatabase } from "drizzle-orm/node-postgres";
import * as schema from "../app/db/schema";

type Tx = Parameters<Parameters<NodePgDatabase<typeof schema>["transaction"]>[0]>[0];
const { contactLenses } = schema;

export const DEMO_LENSES: (typeof contactLenses.$inferInsert)[] = [
  {
    manufacturer: "Northmere Lens Co.",
    name: "Aquilo Daily",
    material: "Hydrogel, 58% water",
    replacement: "daily",
    baseCurvesMm: [8.5, 8.8],
    diametersMm: [14.2],
    sphereMin: -10,
    sphereMax: 6,
    sphereStep: 0.25,
  },
  {
    manufacturer: "Northmere Lens Co.",
    name: "Aquilo Daily Toric",
    material: "Hydrogel, 58% water",
    replacement: "daily",
    baseCurvesMm: [8.6],
    diametersMm: [14.5],
    sphereMin: -8,
    sphereMax: 4,
    sphereStep: 0.25,
    cylinders: [-0.75, -1.25, -1.75],
    axisStep: 10,
  },
  {
    manufacturer: "Brackenridge Vision",
    name: "Solace Monthly",
    material: "Silicone hydrogel",
    replacement: "monthly",
    baseCurvesMm: [8.4, 8.7],
    diametersMm: [14.0],
    sphereMin: -12,
    sphereMax: 8,
    sphereStep: 0.25,
  },
  {
    manufacturer: "Brackenridge Vision",
    name: "Solace Monthly Toric",
    material: "Silicone hydrogel",
    replacement: "monthly",
    baseCurvesMm: [8.6],
    diametersMm: [14.4],
    sphereMin: -9,
    sphereMax: 6,
    sphereStep: 0.25,
    cylinders: [-0.75, -1.25, -1.75, -2.25],
    axisStep: 10,
  },
];

/** Adds the demo lenses once (nothing when the catalogue has any lens). */
export async function seedContactLenses(tx: Tx) {
  const [{ n } = { n: 0 }] = await tx.select({ n: sql<number>`count(*)::int` }).from(contactLenses);
  if (n > 0) return;
  await tx.insert(contactLenses).values(DEMO_LENSES);
}
