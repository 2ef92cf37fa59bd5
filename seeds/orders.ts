/**
 * The demo practice's optical side (fictional): frame stock, labs, lens prices, one order in every
 * state, so each screen and report has something to show, and the collected pairs of about two in
 * five recent spectacle prescriptions, so the owner's "exams that led to an order" is a real share.
 * Orders are walked through the allowed moves (the database refuses any other) with their history.
 */
import { and, desc, eq, inArray, sql } from "drizzle-orm";
import type { NodePgDatabase } from "drizzle-orm/node-postgres";
import * as schema from "../app/db/schema";
import { checkMountedPair } from "../app/lib/optics";

type Tx = Parameters<Parameters<NodePgDatabase<typeof schema>["transaction"]>[0]>[0];
const {
  feeItems,
  frames,
  labs,
  opticalOrders,
  orderChecks,
  orderEvents,
  patients,
  prescriptionEyes,
  prescriptions,
  users,
} = schema;

const FRAMES = [
  {
    supplier: "Harbourline Eyewear",
    model: "Tern 52",
    colour: "Tortoiseshell",
    size: "52-18-140",
    priceMinor: 8900,
    quantity: 4,
  },
  {
    supplier: "Harbourline Eyewear",
    model: "Tern 52",
    colour: "Matte black",
    size: "52-18-140",
    priceMinor: 8900,
    quantity: 3,
  },
  {
    supplier: "Fellgate Optical Frames",
    model: "Corrie",
    colour: "Rose gold",
    size: "50-19-135",
    priceMinor: 11900,
    quantity: 2,
  },
  {
    supplier: "Fellgate Optical Frames",
    model: "Brant",
    colour: "Gunmetal",
    size: "55-17-145",
    priceMinor: 12900,
    quantity: 5,
  },
  { supplier: "Little Otter Kids", model: "Pebble", colour: "Blue", size: "44-16-125", priceMinor: 4900, quantity: 6 },
  { supplier: "Little Otter Kids", model: "Pebble", colour: "Red", size: "44-16-125", priceMinor: 4900, quantity: 0 },
];

const LABS = [
  {
    name: "Brackenford Lens Lab",
    email: "orders@brackenford-lenslab.test",
    phone: "01632 960 771",
    accountRef: "LL-2231",
  },
  {
    name: "Northmoor Contact Lens Supply",
    email: "orders@northmoor-cl.test",
    phone: "01632 960 845",
    accountRef: "NCL-090",
  },
];

const FEES = [
  {
    code: "LN-VF",
    description: "Varifocal lenses, pair",
    priceMinor: 18000,
    kind: "item" as const,
    taxCategory: "standard" as const,
  },
  {
    code: "CL-BOX",
    description: "Monthly contact lenses, box of 3",
    priceMinor: 2400,
    kind: "item" as const,
    taxCategory: "standard" as const,
  },
];

type Step = { to: schema.OrderState; reason?: string; daysAgo: number };
const PATHS: Step[][] = [
  [],
  [{ to: "sent_to_lab", daysAgo: 3 }],
  [{ to: "sent_to_lab", daysAgo: 16 }],
  [
    { to: "sent_to_lab", daysAgo: 9 },
    { to: "received", daysAgo: 1 },
  ],
  [
    { to: "sent_to_lab", daysAgo: 10 },
    { to: "received", daysAgo: 2 },
    { to: "checked", reason: "Passed", daysAgo: 1 },
  ],
  [
    { to: "sent_to_lab", daysAgo: 12 },
    { to: "received", daysAgo: 4 },
    { to: "checked", reason: "Passed", daysAgo: 4 },
    { to: "ready_to_collect", daysAgo: 3 },
  ],
  [
    { to: "sent_to_lab", daysAgo: 30 },
    { to: "received", daysAgo: 22 },
    { to: "checked", reason: "Passed", daysAgo: 22 },
    { to: "ready_to_collect", daysAgo: 21 },
    { to: "collected", daysAgo: 18 },
  ],
  [
    { to: "sent_to_lab", daysAgo: 14 },
    { to: "received", daysAgo: 6 },
    { to: "remake", reason: "Left lens chipped at the edge on arrival", daysAgo: 5 },
  ],
  [{ to: "cancelled", reason: "Patient chose a different frame elsewhere", daysAgo: 7 }],
];

export async function seedOrders(tx: Tx) {
  const [{ n } = { n: 0 }] = await tx.select({ n: sql<number>`count(*)::int` }).from(frames);
  if (n > 0) return; // already seeded
  const frameRows = await tx.insert(frames).values(FRAMES).returning();
  const labRows = await tx.insert(labs).values(LABS).returning();
  const existing = await tx
    .select({ code: feeItems.code })
    .from(feeItems)
    .where(
      inArray(
        feeItems.code,
        FEES.map((f) => f.code),
      ),
    );
  const missing = FEES.filter((f) => !existing.some((e) => e.code === f.code));
  if (missing.length) await tx.insert(feeItems).values(missing);
  const [lensFee] = await tx.select().from(feeItems).where(eq(feeItems.code, "LN-SV"));
  const [desk] = await tx.select().from(users).where(eq(users.role, "receptionist")).limit(1);

  // Spectacle prescriptions of caseload patients other than the portal demo patient, newest first:
  // the spectacles a practice sells follow the exams it has just done.
  const rxs = await tx
    .select({ id: prescriptions.id, patientId: prescriptions.patientId, issuedAt: prescriptions.issuedAt })
    .from(prescriptions)
    .innerJoin(patients, eq(patients.id, prescriptions.patientId))
    .where(
      and(
        eq(prescriptions.kind, "spectacle"),
        sql`${patients.email} is distinct from 'patient@dioptra-demo.test'`,
        sql`${prescriptions.expiresOn} > now()`,
      ),
    )
    .orderBy(desc(prescriptions.issuedAt));
  const day = 86_400_000;
  const now = Date.now();
  const used = new Set<string>();

  /** One order for `rx`, made at `madeAt`, walked through `steps` (each at its own time) with its history. */
  const place = async (
    rx: (typeof rxs)[number],
    n: number,
    madeAt: Date,
    steps: { to: schema.OrderState; reason?: string; at: Date }[],
    takeFromStock: boolean,
  ) => {
    used.add(rx.id);
    const frame = frameRows[n % 4]!;
    const [o] = await tx
      .insert(opticalOrders)
      .values({
        kind: "spectacles",
        patientId: rx.patientId,
        prescriptionId: rx.id,
        labId: labRows[0]!.id,
        frameId: frame.id,
        frameLabel: `${frame.supplier} ${frame.model}, ${frame.colour}, ${frame.size}`,
        framePriceMinor: frame.priceMinor,
        lensType: "single_vision",
        lensMaterial: n % 3 === 0 ? "Standard index 1.50" : "Mid index 1.60",
        coatings: ["Hard coat", "Anti-reflection"],
        pdRightMm: 31.5,
        pdLeftMm: 31,
        lensFeeItemId: lensFee?.id ?? null,
        createdById: desk?.id ?? null,
        createdAt: madeAt,
      })
      .returning();
    await tx.insert(orderEvents).values({
      orderId: o!.id,
      kind: "spectacles",
      fromState: null,
      toState: "draft",
      actorUserId: desk?.id ?? null,
      at: madeAt,
    });
    if (takeFromStock && steps.at(-1)?.to !== "cancelled")
      await tx
        .update(frames)
        .set({ quantity: sql`${frames.quantity} - 1` })
        .where(eq(frames.id, frame.id));
    let from: schema.OrderState = "draft";
    for (const step of steps) {
      await tx.update(opticalOrders).set({ state: step.to }).where(eq(opticalOrders.id, o!.id));
      await tx.update(opticalOrders).set({ stateChangedAt: step.at }).where(eq(opticalOrders.id, o!.id));
      await tx.insert(orderEvents).values({
        orderId: o!.id,
        kind: "spectacles",
        fromState: from,
        toState: step.to,
        actorUserId: desk?.id ?? null,
        reason: step.reason ?? "",
        at: step.at,
      });
      if (step.to === "checked") {
        const eyes = await tx.select().from(prescriptionEyes).where(eq(prescriptionEyes.prescriptionId, rx.id));
        const r = eyes.find((e) => e.eye === "right")!;
        const l = eyes.find((e) => e.eye === "left")!;
        const lens = (e: typeof r) => ({ sphere: e.sphere, cylinder: e.cylinder, axis: e.axis });
        const report = checkMountedPair(
          { ordered: lens(r), measured: lens(r) },
          { ordered: lens(l), measured: lens(l) },
          { standard: "BS EN ISO 21987:2017" },
        );
        await tx.insert(orderChecks).values({
          orderId: o!.id,
          standard: report.standard,
          readings: { note: "demo: readings equal to the order" },
          report,
          pass: report.pass,
          checkedById: desk?.id ?? null,
          at: step.at,
        });
      }
      from = step.to;
    }
  };

  // One order in every state, each on the newest prescription issued before the order was made.
  for (const [i, path] of PATHS.entries()) {
    const madeAt = new Date(now - ((path[0]?.daysAgo ?? 1) + 1) * day);
    const rx = rxs.find((r) => !used.has(r.id) && r.issuedAt.getTime() < madeAt.getTime() - 2 * 3_600_000);
    if (!rx) break;
    const steps = path.map((s) => ({ to: s.to, reason: s.reason, at: new Date(now - s.daysAgo * day) }));
    await place(rx, i, madeAt, steps, true);
  }

  // The everyday trade: about two in five patients given new spectacles in the last three months
  // ordered them here the same day; the pairs went to the lab, passed the check and were collected.
  const settled = rxs.filter(
    (r) => !used.has(r.id) && r.issuedAt.getTime() > now - 90 * day && r.issuedAt.getTime() < now - 21 * day,
  );
  for (const [i, rx] of settled.entries()) {
    if (i % 5 >= 2) continue;
    const at = (days: number) => new Date(rx.issuedAt.getTime() + 30 * 60_000 + days * day);
    await place(
      rx,
      i,
      at(0),
      [
        { to: "sent_to_lab", at: at(1) },
        { to: "received", at: at(7) },
        { to: "checked", reason: "Passed", at: at(7.1) },
        { to: "ready_to_collect", at: at(7.2) },
        { to: "collected", at: at(9 + (i % 9)) },
      ],
      false,
    );
  }
}
