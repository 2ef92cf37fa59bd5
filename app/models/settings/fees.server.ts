import { asc, eq, sql } from "drizzle-orm";
import { feeItems, practiceSettings } from "~/db/schema";
import { db } from "~/utils/db.server";
import { notFound } from "~/utils/failure.server";
import { auditedWrite, changePracticeSettings, saveAudited, type Actor } from "./audited.server";

export type FeeValues = Pick<
  typeof feeItems.$inferInsert,
  "code" | "description" | "priceMinor" | "kind" | "taxCategory"
>;

/**
 * The fees in use, for pickers (an invoice's lines, an appointment type's default fee): by code,
 * or services before items and then by code with `servicesFirst`.
 */
export async function activeFees({ servicesFirst = false }: { servicesFirst?: boolean } = {}) {
  return db
    .select({
      id: feeItems.id,
      code: feeItems.code,
      description: feeItems.description,
      priceMinor: feeItems.priceMinor,
      kind: feeItems.kind,
      taxCategory: feeItems.taxCategory,
    })
    .from(feeItems)
    .where(eq(feeItems.active, true))
    .orderBy(...(servicesFirst ? [asc(feeItems.kind)] : []), asc(feeItems.code));
}

/** The fee schedule, in-use fees first, with the practice's currency and tax rate. */
export async function feeSchedulePage(editId: string | null) {
  const [[settings], fees] = await Promise.all([
    db
      .select({ currency: practiceSettings.currency, taxRateBp: practiceSettings.taxRateBp })
      .from(practiceSettings)
      .where(eq(practiceSettings.id, 1)),
    db
      .select()
      .from(feeItems)
      .orderBy(sql`${feeItems.active} desc`, asc(feeItems.code)),
  ]);
  return {
    currency: settings?.currency ?? "GBP",
    taxRateBp: settings?.taxRateBp ?? 0,
    fees,
    editing: fees.find((f) => f.id === editId) ?? null,
  };
}

export async function setTaxRate(taxRateBp: number, actor: Actor) {
  await changePracticeSettings({ taxRateBp }, "billing.tax_rate_changed", { taxRateBp }, actor);
}

/** Whether another fee already has this code (codes are compared without case). */
export async function feeCodeTaken(code: string, exceptId?: string) {
  const clash = await db
    .select({ id: feeItems.id })
    .from(feeItems)
    .where(sql`lower(${feeItems.code}) = lower(${code})`);
  return clash.some((c) => c.id !== exceptId);
}

/** Adds a fee, or changes the fee `id`; a fee that no longer exists answers 404. */
export async function saveFee(id: string | undefined, values: FeeValues, actor: Actor) {
  const saved = await saveAudited(
    {
      id,
      entityType: "fee_item",
      actions: { created: "billing.fee_added", changed: "billing.fee_changed" },
      detail: values,
    },
    actor,
    async (tx) =>
      id
        ? (await tx.update(feeItems).set(values).where(eq(feeItems.id, id)).returning({ id: feeItems.id }))[0]
        : (await tx.insert(feeItems).values(values).returning({ id: feeItems.id }))[0],
  );
  if (!saved) notFound("There is no such fee.");
}

/** Withdraws a fee from new invoices, or puts it back; a fee that no longer exists answers 404. */
export async function setFeeInUse(id: string, inUse: boolean, actor: Actor) {
  const done = await auditedWrite(
    { action: `billing.fee_${inUse ? "restored" : "withdrawn"}`, entityType: "fee_item", entityId: id },
    actor,
    async (tx) =>
      (await tx.update(feeItems).set({ active: inUse }).where(eq(feeItems.id, id)).returning({ id: feeItems.id }))[0],
  );
  if (!done) notFound("There is no such fee.");
}
