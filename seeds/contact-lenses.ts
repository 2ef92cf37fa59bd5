/**
 * The demo practice's contact-lens catalogue (fictional makers and lens names; generic
 * materials): daily disposable, two-weekly and monthly spherical lenses, toric lenses and a
 * multifocal. Power ranges and steps are typical of soft lenses (common practice), for the demo
 * only. `fitDemoLens` chooses a lens and a power it is made in for a wearer's refraction.
 */
import { and, eq } from "drizzle-orm";
import type { NodePgDatabase } from "drizzle-orm/node-postgres";
import * as schema from "../app/db/schema";
import { roundRx, toCylinderForm, vertexConvert, type SphCyl } from "../app/lib/optics";

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
  {
    manufacturer: "Brackenridge Vision",
    name: "Solace Monthly Multifocal",
    material: "Silicone hydrogel",
    replacement: "monthly",
    baseCurvesMm: [8.6],
    diametersMm: [14.2],
    sphereMin: -8,
    sphereMax: 6,
    sphereStep: 0.25,
  },
  {
    manufacturer: "Tidewell Optics",
    name: "Halcyon Two-Week",
    material: "Silicone hydrogel",
    replacement: "two_weekly",
    baseCurvesMm: [8.3, 8.6],
    diametersMm: [14.0],
    sphereMin: -10,
    sphereMax: 6,
    sphereStep: 0.25,
  },
];

/** Adds each demo lens the catalogue does not have yet (by maker and name). */
export async function seedContactLenses(tx: Tx) {
  for (const lens of DEMO_LENSES) {
    const [have] = await tx
      .select({ id: contactLenses.id })
      .from(contactLenses)
      .where(and(eq(contactLenses.manufacturer, lens.manufacturer), eq(contactLenses.name, lens.name)))
      .limit(1);
    if (!have) await tx.insert(contactLenses).values(lens);
  }
}

export type DemoLens = typeof contactLenses.$inferSelect;
export type DemoFit = {
  lens: DemoLens;
  power: SphCyl;
  exact: SphCyl;
  baseCurveMm: number;
  diameterMm: number;
};

/** Lens families a wearer is kept in: the spherical lens and, for an astigmatic eye, its toric partner. */
const FAMILIES = [
  ["Aquilo Daily", "Aquilo Daily Toric"],
  ["Solace Monthly", "Solace Monthly Toric"],
  ["Halcyon Two-Week", "Solace Monthly Toric"],
] as const;
const MULTIFOCAL = "Solace Monthly Multifocal";

const nearest = (value: number, made: readonly number[]) =>
  made.reduce((best, m) => (Math.abs(m - value) < Math.abs(best - value) ? m : best), made[0]!);

/**
 * One eye's lens and power from the spectacle refraction at 12 mm: a toric lens from −0.75 D of
 * cylinder, else a sphere at the spherical equivalent (common practice); a presbyope gets the
 * multifocal. The power is rounded to the lens's steps, its cylinder to the nearest made and its
 * axis to the lens's axis step. Null when no lens of the family is made in that power.
 */
export function fitDemoLens(
  catalogue: DemoLens[],
  spectacle: SphCyl,
  presbyope: boolean,
  family: number,
  pick: number,
): DemoFit | null {
  const exact = toCylinderForm(vertexConvert(spectacle, 12, 0), "minus");
  const [sphericalName, toricName] = FAMILIES[family % FAMILIES.length]!;
  const toric = !presbyope && exact.cylinder <= -0.75;
  const name = presbyope ? MULTIFOCAL : toric ? toricName : sphericalName;
  const lens = catalogue.find((l) => l.name === name);
  if (!lens) return null;
  let power: SphCyl;
  if (toric) {
    const cylinder = nearest(exact.cylinder, lens.cylinders);
    const step = lens.axisStep ?? 10;
    const axis = Math.round(exact.axis / step) * step || 180;
    // Keep the spherical equivalent when the made cylinder differs from the measured one.
    const sphere = roundRx({ sphere: exact.sphere + (exact.cylinder - cylinder) / 2, cylinder: 0, axis: 180 }, 0.25);
    power = { sphere: sphere.sphere, cylinder, axis: axis > 180 ? axis - 180 : axis };
  } else {
    power = roundRx({ sphere: exact.sphere + exact.cylinder / 2, cylinder: 0, axis: 180 }, lens.sphereStep);
  }
  if (power.sphere < lens.sphereMin || power.sphere > lens.sphereMax) return null;
  return {
    lens,
    power,
    exact,
    baseCurveMm: lens.baseCurvesMm[pick % lens.baseCurvesMm.length]!,
    diameterMm: lens.diametersMm[pick % lens.diametersMm.length]!,
  };
}
