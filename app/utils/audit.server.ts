import { sql, type SQL } from "drizzle-orm";
import { auditLog } from "~/db/schema";
import { db, type Tx } from "./db.server";
import { clientIp } from "./request.server";

export type AuditEntry = {
  action: string;
  actorUserId?: string | null;
  entityType?: string;
  entityId?: string;
  patientId?: string | null;
  detail?: Record<string, unknown>;
  request?: Request;
};

/** Writes one audit row; pass the transaction so the record and the change commit together. */
export async function audit(entry: AuditEntry, tx: Tx | typeof db = db) {
  await tx.insert(auditLog).values({
    action: entry.action,
    actorUserId: entry.actorUserId ?? null,
    entityType: entry.entityType,
    entityId: entry.entityId,
    patientId: entry.patientId ?? null,
    ip: entry.request ? clientIp(entry.request) : null,
    detail: entry.detail,
  });
}

/**
 * The audit row as a data-modifying CTE, for a read that must be recorded: put it in the read's
 * own statement (`db.with(cte).select()…`) and the row is written in the same round trip and
 * commits with the read, so it neither delays the page nor can be lost. `onlyIf` (a condition in
 * SQL) writes the row only when it holds, e.g. when the record read exists.
 */
export function auditCte(entry: AuditEntry, onlyIf?: SQL) {
  const detail = entry.detail === undefined ? null : JSON.stringify(entry.detail);
  return db.$with("audited", { one: sql<number>`1` }).as(
    sql`insert into ${auditLog} (action, actor_user_id, entity_type, entity_id, patient_id, ip, detail)
        select ${entry.action}, ${entry.actorUserId ?? null}::uuid, ${entry.entityType ?? null}, ${entry.entityId ?? null},
               ${entry.patientId ?? null}::uuid, ${entry.request ? clientIp(entry.request) : null}, ${detail}::jsonb
         where ${onlyIf ?? sql`true`}
        returning 1 as one`,
  );
}
