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
