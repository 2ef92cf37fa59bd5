/**
 * The practice's closures (bank holidays, practice or site closures, a clinician's leave) and the
 * one check every booking path runs before it writes or offers a time: is the site open then,
 * and is neither the practice closed nor the clinician away that day.
 */
import { and, asc, desc, eq, gte, inArray, isNull, lte, notInArray, or, sql } from "drizzle-orm";
import { alias } from "drizzle-orm/pg-core";
import { appointments, closures, siteOpeningHours, sites, users } from "~/db/schema";
import { checkOpeningHours, type DaySpan, WEEKDAY_NAMES } from "~/lib/scheduling/hours";
import { closureOn, closureRefusal, type ClosureSpan } from "~/lib/scheduling/closures";
import { addDays, localParts, minutesToHhmm, startOfLocalDay } from "~/lib/scheduling/time";
import { audit } from "~/utils/audit.server";
import { db, type Tx } from "~/utils/db.server";
import { DomainError } from "~/utils/failure.server";
import type { SessionUser } from "~/utils/session.server";

type Reader = Tx | typeof db;

/** What a booking check needs to know about closures and opening hours over some days. */
export type OpeningContext = {
  closures: ClosureSpan[];
  opening: Map<string, DaySpan[]>;
  siteNames: Map<string, string>;
};

/** Closures touching [fromDate, toDate] and every site's opening hours. */
export async function openingContext(fromDate: string, toDate: string, tx: Reader = db): Promise<OpeningContext> {
  const [rows, hours, siteRows] = await Promise.all([
    tx
      .select({
        kind: closures.kind,
        siteId: closures.siteId,
        providerId: closures.providerId,
        startsOn: closures.startsOn,
        endsOn: closures.endsOn,
        reason: closures.reason,
      })
      .from(closures)
      .where(and(lte(closures.startsOn, toDate), gte(closures.endsOn, fromDate))),
    tx.select().from(siteOpeningHours),
    tx.select({ id: sites.id, name: sites.name }).from(sites),
  ]);
  const opening = new Map<string, DaySpan[]>();
  for (const h of hours) opening.set(h.siteId, [...(opening.get(h.siteId) ?? []), h]);
  return { closures: rows, opening, siteNames: new Map(siteRows.map((s) => [s.id, s.name])) };
}

/** Why [start, end) at `siteId` with `provider` cannot be booked (closed day, outside opening hours, leave), or null. */
export function closedReason(
  ctx: OpeningContext,
  slot: { start: Date; end: Date; timeZone: string; siteId: string; provider: { id: string; name: string } },
): string | null {
  const date = localParts(slot.start, slot.timeZone).date;
  const siteName = ctx.siteNames.get(slot.siteId) ?? "The site";
  const closure = closureOn(date, { siteId: slot.siteId, providerId: slot.provider.id }, ctx.closures);
  if (closure) return closureRefusal(closure, { siteName, providerName: slot.provider.name });
  const open = checkOpeningHours(slot.start, slot.end, slot.timeZone, ctx.opening.get(slot.siteId) ?? [], siteName);
  return open.ok ? null : open.reason;
}

export type ClosureInput = ClosureSpan;

const MAX_DAYS = 366;

/** Upcoming and current closures (ending on or after `fromDate`), earliest first, with names. */
export async function listClosures(fromDate: string) {
  const provider = alias(users, "provider");
  return db
    .select({
      id: closures.id,
      kind: closures.kind,
      siteId: closures.siteId,
      siteName: sites.name,
      providerId: closures.providerId,
      providerName: provider.name,
      startsOn: closures.startsOn,
      endsOn: closures.endsOn,
      reason: closures.reason,
    })
    .from(closures)
    .leftJoin(sites, eq(sites.id, closures.siteId))
    .leftJoin(provider, eq(provider.id, closures.providerId))
    .where(gte(closures.endsOn, fromDate))
    .orderBy(asc(closures.startsOn), asc(closures.kind));
}

/** Live appointments already booked inside a closure (they are kept; the desk moves them). */
async function appointmentsInside(tx: Reader, c: ClosureInput, timeZone: string) {
  const from = startOfLocalDay(c.startsOn, timeZone);
  const to = startOfLocalDay(addDays(c.endsOn, 1), timeZone);
  const [row] = await tx
    .select({ n: sql<number>`count(*)::int` })
    .from(appointments)
    .where(
      and(
        gte(appointments.startsAt, from),
        sql`${appointments.startsAt} < ${to}`,
        notInArray(appointments.status, ["cancelled", "no_show"]),
        c.siteId ? eq(appointments.siteId, c.siteId) : undefined,
        c.providerId ? eq(appointments.providerId, c.providerId) : undefined,
      ),
    );
  return row?.n ?? 0;
}

/** Adds a closure after checking who and where it names; answers it and how many live appointments it covers. */
export async function addClosure(actor: SessionUser, input: ClosureInput, timeZone: string, request?: Request) {
  if (input.endsOn < input.startsOn)
    throw new DomainError("The last day must be on or after the first day.", { status: 422, field: "endsOn" });
  const days = (Date.parse(`${input.endsOn}T00:00:00Z`) - Date.parse(`${input.startsOn}T00:00:00Z`)) / 86_400_000 + 1;
  if (days > MAX_DAYS)
    throw new DomainError(`A closure can span at most ${MAX_DAYS} days; add a second one for longer.`, {
      status: 422,
      field: "endsOn",
    });
  const value = { ...input };
  if (input.kind === "leave") {
    if (!input.providerId)
      throw new DomainError("Choose the clinician who is on leave.", { status: 422, field: "providerId" });
    const [p] = await db
      .select({ id: users.id })
      .from(users)
      .where(
        and(eq(users.id, input.providerId), eq(users.active, true), inArray(users.role, ["owner", "optometrist"])),
      );
    if (!p) throw new DomainError("No such clinician.", { status: 422, field: "providerId" });
    value.siteId = null;
  } else value.providerId = null;
  if (value.siteId) {
    const [s] = await db.select({ id: sites.id }).from(sites).where(eq(sites.id, value.siteId));
    if (!s) throw new DomainError("No such site.", { status: 422, field: "siteId" });
  }
  return db.transaction(async (tx) => {
    if (value.kind === "bank_holiday") {
      const [same] = await tx
        .select({ reason: closures.reason })
        .from(closures)
        .where(
          and(
            eq(closures.kind, "bank_holiday"),
            lte(closures.startsOn, value.endsOn),
            gte(closures.endsOn, value.startsOn),
            value.siteId ? or(isNull(closures.siteId), eq(closures.siteId, value.siteId)) : undefined,
          ),
        );
      if (same)
        throw new DomainError(`A bank holiday is already set on those days (${same.reason}).`, {
          status: 409,
          field: "startsOn",
        });
    }
    const [row] = await tx
      .insert(closures)
      .values({ ...value, createdById: actor.id })
      .returning();
    await audit(
      {
        action: "closure.added",
        actorUserId: actor.id,
        entityType: "closure",
        entityId: row!.id,
        detail: value,
        request,
      },
      tx,
    );
    return { closure: row!, affected: await appointmentsInside(tx, value, timeZone) };
  });
}

/** Removes a closure (bookings on those days are allowed again). */
export async function removeClosure(actor: SessionUser, id: string, request?: Request) {
  return db.transaction(async (tx) => {
    const [row] = await tx.delete(closures).where(eq(closures.id, id)).returning();
    if (!row) throw new DomainError("No such closure (it may have been removed already).", { status: 404 });
    await audit(
      {
        action: "closure.removed",
        actorUserId: actor.id,
        entityType: "closure",
        entityId: id,
        detail: { kind: row.kind, startsOn: row.startsOn, endsOn: row.endsOn, reason: row.reason },
        request,
      },
      tx,
    );
    return row;
  });
}

/** Each open site's opening hours by weekday ("" when closed that day), the default site first. */
export async function openingHoursBySite() {
  const [list, hours] = await Promise.all([
    db
      .select({ id: sites.id, name: sites.name, isDefault: sites.isDefault })
      .from(sites)
      .where(eq(sites.active, true))
      .orderBy(desc(sites.isDefault), asc(sites.name)),
    db.select().from(siteOpeningHours),
  ]);
  return list.map((s) => {
    const own = hours.filter((h) => h.siteId === s.id);
    return {
      id: s.id,
      name: s.name,
      set: own.length > 0,
      days: WEEKDAY_NAMES.map((name, i) => {
        const h = own.find((x) => x.weekday === i + 1);
        return { name, hours: h ? `${minutesToHhmm(h.startMinute)}–${minutesToHhmm(h.endMinute)}` : "" };
      }),
    };
  });
}
