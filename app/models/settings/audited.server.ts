import { eq } from "drizzle-orm";
import { practiceSettings } from "~/db/schema";
import { audit } from "~/utils/audit.server";
import { db, type Tx } from "~/utils/db.server";

/** Who made a settings change, for its audit row. */
export type Actor = { userId: string; request: Request };

/**
 * Runs one settings write and its audit row in the same transaction. `write` answers the written
 * row, or nothing when the record to change no longer exists; nothing is then audited. The audit
 * row names `entityId`, or else the id of the row written.
 */
export async function auditedWrite<T extends { id?: string }>(
  entry: { action: string; entityType: string; entityId?: string; detail?: Record<string, unknown> },
  actor: Actor,
  write: (tx: Tx) => Promise<T | undefined>,
): Promise<T | undefined> {
  return db.transaction(async (tx) => {
    const row = await write(tx);
    if (!row) return undefined;
    await audit(
      {
        action: entry.action,
        actorUserId: actor.userId,
        entityType: entry.entityType,
        entityId: entry.entityId ?? row.id,
        detail: entry.detail,
        request: actor.request,
      },
      tx,
    );
    return row;
  });
}

/** Creates one settings record (no `id`) or changes the record `id`; false when it no longer exists. */
export async function saveAudited(
  change: {
    id?: string;
    entityType: string;
    actions: { created: string; changed: string };
    detail?: Record<string, unknown>;
  },
  actor: Actor,
  write: (tx: Tx) => Promise<{ id: string } | undefined>,
): Promise<boolean> {
  const row = await auditedWrite(
    {
      action: change.id ? change.actions.changed : change.actions.created,
      entityType: change.entityType,
      entityId: change.id,
      detail: change.detail,
    },
    actor,
    write,
  );
  return row !== undefined;
}

/** Changes practice-wide settings and audits the change under `action`. */
export async function changePracticeSettings(
  values: Partial<typeof practiceSettings.$inferInsert>,
  action: string,
  detail: Record<string, unknown>,
  actor: Actor,
) {
  await db.transaction(async (tx) => {
    await tx
      .update(practiceSettings)
      .set({ ...values, updatedAt: new Date() })
      .where(eq(practiceSettings.id, 1));
    await audit({ action, actorUserId: actor.userId, detail, request: actor.request }, tx);
  });
}

/** The practice's currency (ISO 4217 code). */
export async function practiceCurrency(): Promise<string> {
  const [row] = await db
    .select({ currency: practiceSettings.currency })
    .from(practiceSettings)
    .where(eq(practiceSettings.id, 1));
  return row?.currency ?? "GBP";
}
