import { asc, desc, eq } from "drizzle-orm";
import { frames } from "~/db/schema";
import { db } from "~/utils/db.server";
import { notFound } from "~/utils/failure.server";
import { auditedWrite, practiceCurrency, type Actor } from "./audited.server";

/** The frame stock (in use first, by supplier and model) and the practice's currency. */
export async function framesPage() {
  const [rows, currency] = await Promise.all([
    db.select().from(frames).orderBy(desc(frames.active), asc(frames.supplier), asc(frames.model)),
    practiceCurrency(),
  ]);
  return { frames: rows.map((f) => ({ ...f, createdAt: undefined })), currency };
}

export type FrameValues = Pick<
  typeof frames.$inferInsert,
  "supplier" | "model" | "colour" | "size" | "priceMinor" | "quantity"
>;

export async function addFrame(values: FrameValues, actor: Actor) {
  await auditedWrite(
    { action: "frame.added", entityType: "frame", detail: values },
    actor,
    async (tx) => (await tx.insert(frames).values(values).returning({ id: frames.id }))[0],
  );
}

/** Sets a frame's stock count, or withdraws or restores it; answers its model, 404 when it no longer exists. */
export async function changeFrame(
  id: string,
  change: { intent: "stock"; quantity: number } | { intent: "withdraw" | "restore" },
  actor: Actor,
) {
  const set = change.intent === "stock" ? { quantity: change.quantity } : { active: change.intent === "restore" };
  const row = await auditedWrite(
    { action: `frame.${change.intent}`, entityType: "frame", entityId: id, detail: set },
    actor,
    async (tx) =>
      (await tx.update(frames).set(set).where(eq(frames.id, id)).returning({ id: frames.id, model: frames.model }))[0],
  );
  if (!row) notFound("There is no such frame.");
  return row;
}
