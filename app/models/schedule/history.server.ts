import { alias } from "drizzle-orm/pg-core";
import { asc, eq } from "drizzle-orm";
import { appointmentMoves, appointmentStatusChanges, users } from "~/db/schema";
import { STATUS_LABEL } from "~/lib/scheduling/status";
import { formatLocal } from "~/lib/scheduling/time";
import { db } from "~/utils/db.server";

export type HistoryEntry = { at: string; what: string; by: string };

/**
 * An appointment's history in time order: each status change (from → to) and each move or resize
 * (from → to, and the clinician when that changed), with who did it; times in `timeZone`.
 */
export async function appointmentHistory(appointmentId: string, timeZone: string): Promise<HistoryEntry[]> {
  const statuses = await db
    .select({
      from: appointmentStatusChanges.fromStatus,
      to: appointmentStatusChanges.toStatus,
      at: appointmentStatusChanges.changedAt,
      by: users.name,
    })
    .from(appointmentStatusChanges)
    .leftJoin(users, eq(users.id, appointmentStatusChanges.changedById))
    .where(eq(appointmentStatusChanges.appointmentId, appointmentId))
    .orderBy(asc(appointmentStatusChanges.changedAt), asc(appointmentStatusChanges.id));
  const fromProvider = alias(users, "from_provider");
  const toProvider = alias(users, "to_provider");
  const moves = await db
    .select({
      fromStart: appointmentMoves.fromStartsAt,
      fromEnd: appointmentMoves.fromEndsAt,
      toStart: appointmentMoves.toStartsAt,
      toEnd: appointmentMoves.toEndsAt,
      fromProviderId: appointmentMoves.fromProviderId,
      toProviderId: appointmentMoves.toProviderId,
      fromProvider: fromProvider.name,
      toProvider: toProvider.name,
      at: appointmentMoves.movedAt,
      by: users.name,
    })
    .from(appointmentMoves)
    .leftJoin(users, eq(users.id, appointmentMoves.movedById))
    .leftJoin(fromProvider, eq(fromProvider.id, appointmentMoves.fromProviderId))
    .leftJoin(toProvider, eq(toProvider.id, appointmentMoves.toProviderId))
    .where(eq(appointmentMoves.appointmentId, appointmentId))
    .orderBy(asc(appointmentMoves.movedAt), asc(appointmentMoves.id));
  const span = (start: Date, end: Date) =>
    `${formatLocal(start, timeZone)}–${formatLocal(end, timeZone, { withDate: false })}`;
  const entries: { at: Date; what: string; by: string | null }[] = [
    ...statuses.map((h) => ({
      at: h.at,
      what: `${h.from ? `${STATUS_LABEL[h.from]} → ` : ""}${STATUS_LABEL[h.to]}`,
      by: h.by,
    })),
    ...moves.map((m) => ({
      at: m.at,
      what: `Moved ${span(m.fromStart, m.fromEnd)} → ${span(m.toStart, m.toEnd)}${
        m.fromProviderId !== m.toProviderId ? ` (${m.fromProvider ?? "?"} → ${m.toProvider ?? "?"})` : ""
      }`,
      by: m.by,
    })),
  ];
  return entries
    .sort((a, b) => a.at.getTime() - b.at.getTime())
    .map((e) => ({ at: formatLocal(e.at, timeZone), what: e.what, by: e.by ?? "a former account" }));
}
