/**
 * Booking rules on the server: validate a booking or a change, write it in a transaction, and
 * turn the database's refusal (the exclusion constraint against double booking) into a 409 that
 * names the clashing appointment. Used by the schedule pages and by the JSON API alike.
 */
import { and, asc, eq, gt, inArray, lt, ne, sql } from "drizzle-orm";
import {
  appointmentMessages,
  appointmentMoves,
  appointments,
  appointmentStatusChanges,
  appointmentTypes,
  exams,
  patients,
  providerBreaks,
  rooms,
  sites,
  users,
  workingHours,
} from "~/db/schema";
import { checkWorkingHours, WEEKDAY_NAMES } from "~/lib/scheduling/hours";
import {
  canChangeStatus,
  DAY_OF_VISIT_STATUSES,
  isMovable,
  LIVE_STATUSES,
  STATUS_LABEL,
  type Status,
} from "~/lib/scheduling/status";
import { formatLocal, localParts, zonedIsoFormatter } from "~/lib/scheduling/time";
import type { CalendarFeed } from "~/lib/scheduling/calendar-feed";
import { audit } from "~/utils/audit.server";
import { db, pool, type Tx } from "~/utils/db.server";
import { closedReason, openingContext } from "./closures.server";
import { queueAppointmentMessage, rescheduleReminder } from "./reminders.server";
import { practiceSchedule } from "./schedule-settings.server";

export { practiceSchedule };
import type { SessionUser } from "~/utils/session.server";
import { DomainError, type DomainErrorOptions } from "~/utils/failure.server";

export type FieldErrors = Record<string, string[]>;

/** A refused booking or change: the status to answer with, a message, and errors by field. */
export class BookingError extends DomainError {
  readonly clash?: ClashInfo;
  constructor(message: string, options: DomainErrorOptions & { clash?: ClashInfo } = {}) {
    super(message, options);
    this.clash = options.clash;
  }
}

export type ClashInfo = {
  id: string;
  start: string;
  end: string;
  patientName: string;
  typeName: string;
  providerName: string;
};

/** Staff who can be booked: active owners and optometrists (and anyone an appointment type names). */
export async function bookableProviders() {
  return db
    .select({ id: users.id, name: users.name, role: users.role })
    .from(users)
    .where(and(eq(users.active, true), inArray(users.role, ["owner", "optometrist"])))
    .orderBy(asc(users.name));
}

const PG_EXCLUSION_VIOLATION = "23P01";
const PG_CHECK_VIOLATION = "23514";

function pgCode(error: unknown): { code?: string; constraint?: string } {
  let e = error as { code?: string; constraint?: string; cause?: unknown } | undefined;
  for (let i = 0; i < 3 && e; i++) {
    if (e.code) return e;
    e = e.cause as typeof e;
  }
  return {};
}

/** The live appointment of `providerId` that overlaps [start, end), if any (for the 409 message). */
export async function findClash(
  providerId: string,
  start: Date,
  end: Date,
  excludeId?: string,
): Promise<ClashInfo | undefined> {
  const [row] = await db
    .select({
      id: appointments.id,
      start: appointments.startsAt,
      end: appointments.endsAt,
      first: patients.firstName,
      last: patients.lastName,
      typeName: appointmentTypes.name,
      providerName: users.name,
    })
    .from(appointments)
    .innerJoin(patients, eq(patients.id, appointments.patientId))
    .innerJoin(appointmentTypes, eq(appointmentTypes.id, appointments.appointmentTypeId))
    .innerJoin(users, eq(users.id, appointments.providerId))
    .where(
      and(
        eq(appointments.providerId, providerId),
        inArray(appointments.status, [...LIVE_STATUSES]),
        lt(appointments.startsAt, end),
        gt(appointments.endsAt, start),
        excludeId ? ne(appointments.id, excludeId) : undefined,
      ),
    )
    .orderBy(asc(appointments.startsAt))
    .limit(1);
  if (!row) return undefined;
  return {
    id: row.id,
    start: row.start.toISOString(),
    end: row.end.toISOString(),
    patientName: `${row.first} ${row.last}`,
    typeName: row.typeName,
    providerName: row.providerName,
  };
}

async function clashError(
  providerId: string,
  start: Date,
  end: Date,
  timeZone: string,
  excludeId?: string,
): Promise<BookingError> {
  const clash = await findClash(providerId, start, end, excludeId);
  const what = clash
    ? `${clash.providerName} already has ${clash.patientName} (${clash.typeName}) from ${formatLocal(new Date(clash.start), timeZone)} to ${formatLocal(new Date(clash.end), timeZone, { withDate: false })}.`
    : "The provider already has an appointment at that time.";
  return new BookingError(`${what} Choose another time or provider.`, {
    status: 409,
    fieldErrors: { start: [what] },
    clash: clash,
  });
}

async function roomClashError(
  roomId: string,
  start: Date,
  end: Date,
  timeZone: string,
  excludeId?: string,
): Promise<BookingError> {
  const [room] = await db
    .select({ name: rooms.name, site: sites.name })
    .from(rooms)
    .innerJoin(sites, eq(sites.id, rooms.siteId))
    .where(eq(rooms.id, roomId));
  const [other] = await db
    .select({ start: appointments.startsAt, end: appointments.endsAt, providerName: users.name })
    .from(appointments)
    .innerJoin(users, eq(users.id, appointments.providerId))
    .where(
      and(
        eq(appointments.roomId, roomId),
        inArray(appointments.status, [...LIVE_STATUSES]),
        lt(appointments.startsAt, end),
        gt(appointments.endsAt, start),
        excludeId ? ne(appointments.id, excludeId) : undefined,
      ),
    )
    .limit(1);
  const what = `${room?.name ?? "The room"} at ${room?.site ?? "the site"} is in use${other ? ` by ${other.providerName} from ${formatLocal(other.start, timeZone)} to ${formatLocal(other.end, timeZone, { withDate: false })}` : " at that time"}.`;
  return new BookingError(`${what} Choose another room or time.`, {
    status: 409,
    fieldErrors: { roomId: [what] },
  });
}

type SlotInput = {
  providerId: string;
  appointmentTypeId: string;
  start: Date;
  end?: Date;
  siteId?: string;
  roomId?: string | null;
};

/**
 * Checks everything except overlap (the database enforces that of providers and of rooms);
 * answers the end time, the site and the room to use. Without a site the booking goes where the
 * provider works that day; without a room, to the room the provider has that day (if any).
 */
async function validateSlot(
  tx: Tx,
  input: SlotInput,
  timeZone: string,
  opts: { allowPast?: boolean; horizonDays?: number } = {},
) {
  const errors: FieldErrors = {};
  const [type] = await tx.select().from(appointmentTypes).where(eq(appointmentTypes.id, input.appointmentTypeId));
  if (!type || !type.active) errors.appointmentTypeId = ["No such appointment type (or it is no longer offered)."];
  const [provider] = await tx
    .select({ id: users.id, name: users.name, role: users.role, active: users.active })
    .from(users)
    .where(eq(users.id, input.providerId));
  if (!provider || !provider.active || provider.role === "patient") errors.providerId = ["No such provider."];
  else if (type && !type.performerRoles.includes(provider.role))
    errors.providerId = [
      `${provider.name} may not perform ${type.name} (the owner sets who may, under appointment types).`,
    ];
  if (Object.keys(errors).length)
    throw new BookingError(Object.values(errors).flat().join(" "), {
      status: errors.appointmentTypeId || errors.providerId?.[0] === "No such provider." ? 404 : 422,
      fieldErrors: errors,
    });
  const end = input.end ?? new Date(input.start.getTime() + type!.durationMinutes * 60_000);
  if (end <= input.start)
    throw new BookingError("The end must be after the start.", {
      status: 422,
      fieldErrors: { end: ["The end must be after the start."] },
    });
  if (end.getTime() - input.start.getTime() > 8 * 60 * 60_000)
    throw new BookingError("An appointment can last at most 8 hours.", {
      status: 422,
      fieldErrors: {
        end: ["An appointment can last at most 8 hours."],
      },
    });
  if (!opts.allowPast && input.start.getTime() < Date.now() - 60_000) {
    throw new BookingError("That time is in the past; choose a time from now on.", {
      status: 422,
      fieldErrors: {
        start: ["That time is in the past; choose a time from now on."],
      },
    });
  }
  if (opts.horizonDays !== undefined && input.start.getTime() > Date.now() + opts.horizonDays * 86_400_000) {
    const msg = `Bookings can be made at most ${opts.horizonDays} days ahead (until ${localParts(new Date(Date.now() + opts.horizonDays * 86_400_000), timeZone).date}).`;
    throw new BookingError(msg, { status: 422, fieldErrors: { start: [msg] } });
  }
  let site: { id: string; name: string; timeZone: string; active: boolean } | undefined;
  if (input.siteId) {
    [site] = await tx
      .select({ id: sites.id, name: sites.name, timeZone: sites.timeZone, active: sites.active })
      .from(sites)
      .where(eq(sites.id, input.siteId));
    if (!site || !site.active)
      throw new BookingError("No such site.", {
        status: 404,
        fieldErrors: { siteId: ["No such site (or it is closed)."] },
      });
  }
  const hours = await tx.select().from(workingHours).where(eq(workingHours.providerId, input.providerId));
  if (!hours.length) {
    const msg = `${provider!.name} has no working hours set yet; the practice owner sets them under Settings → Working hours.`;
    throw new BookingError(msg, { status: 422, fieldErrors: { start: [msg] } });
  }
  // Working hours are wall-clock minutes at their site: without a site asked for, the booking is
  // read in the zone of the site where the provider works that day (the practice's zone finds the day).
  let zone = site?.timeZone ?? timeZone;
  if (!site) {
    const row = hours.find((h) => h.weekday === localParts(input.start, zone).weekday);
    const [there] = row
      ? await tx.select({ timeZone: sites.timeZone }).from(sites).where(eq(sites.id, row.siteId))
      : [];
    if (there) zone = there.timeZone;
  }
  const breaks = await tx.select().from(providerBreaks).where(eq(providerBreaks.providerId, input.providerId));
  const check = checkWorkingHours(input.start, end, zone, hours, breaks);
  if (!check.ok) throw new BookingError(check.reason, { status: 422, fieldErrors: { start: [check.reason] } });
  // The day's working hours say where the provider is; a booking at another site is refused.
  const weekday = localParts(input.start, zone).weekday;
  const day = hours.find((h) => h.weekday === weekday)!;
  if (site && day.siteId !== site.id) {
    const [there] = await tx.select({ name: sites.name }).from(sites).where(eq(sites.id, day.siteId));
    const msg = `${provider!.name} works at ${there?.name ?? "another site"} on ${WEEKDAY_NAMES[weekday - 1]}s, not at ${site.name}. Choose another day, provider or site.`;
    throw new BookingError(msg, { status: 422, fieldErrors: { siteId: [msg] } });
  }
  const siteId = day.siteId;
  // The site must be open then, and neither the practice closed nor the provider on leave that day.
  const date = localParts(input.start, zone).date;
  const closed = closedReason(await openingContext(date, date, tx), {
    start: input.start,
    end,
    timeZone: zone,
    siteId,
    provider: provider!,
  });
  if (closed) throw new BookingError(closed, { status: 422, fieldErrors: { start: [closed] } });
  let roomId: string | null = input.roomId === undefined ? day.roomId : input.roomId;
  if (input.roomId) {
    const [room] = await tx
      .select({ id: rooms.id, siteId: rooms.siteId, name: rooms.name, active: rooms.active })
      .from(rooms)
      .where(eq(rooms.id, input.roomId));
    const [siteName] = await tx.select({ name: sites.name }).from(sites).where(eq(sites.id, siteId));
    if (!room || !room.active || room.siteId !== siteId) {
      const msg = room
        ? `${room.name} is not a room at ${siteName?.name ?? "this site"}; choose one of its rooms.`
        : `No such room at ${siteName?.name ?? "this site"}.`;
      throw new BookingError(msg, { status: 422, fieldErrors: { roomId: [msg] } });
    }
    roomId = room.id;
  }
  return { type: type!, provider: provider!, end, siteId, roomId };
}

/** How far ahead `actor` may book: the portal's horizon for patients, the team's for staff (practice settings). */
export function bookingHorizonDays(
  actor: { role: string },
  settings: { portalBookingDays: number; staffBookingDays: number },
) {
  return actor.role === "patient" ? settings.portalBookingDays : settings.staffBookingDays;
}

export type BookingInput = {
  patientId: string;
  providerId: string;
  appointmentTypeId: string;
  start: Date;
  end?: Date;
  notes?: string;
  siteId?: string;
  roomId?: string | null;
};

/** Books an appointment, queues its confirmation and reminder e-mails, all in one transaction. */
export async function bookAppointment(actor: SessionUser, input: BookingInput, request?: Request) {
  const settings = await practiceSchedule();
  let end = input.end ?? input.start;
  let roomId: string | null = null;
  try {
    return await db.transaction(async (tx) => {
      await lockProviderDiary(tx, input.providerId);
      const [patient] = await tx.select({ id: patients.id }).from(patients).where(eq(patients.id, input.patientId));
      if (!patient)
        throw new BookingError("No such patient.", { status: 404, fieldErrors: { patientId: ["No such patient."] } });
      const slot = await validateSlot(tx, input, settings.timeZone, {
        horizonDays: bookingHorizonDays(actor, settings),
      });
      ({ end, roomId } = slot);
      const [row] = await tx
        .insert(appointments)
        .values({
          patientId: input.patientId,
          providerId: input.providerId,
          appointmentTypeId: input.appointmentTypeId,
          siteId: slot.siteId,
          roomId,
          startsAt: input.start,
          endsAt: end,
          notes: input.notes ?? "",
          createdById: actor.id,
          statusChangedById: actor.id,
        })
        .returning();
      await tx
        .insert(appointmentStatusChanges)
        .values({ appointmentId: row!.id, fromStatus: null, toStatus: "booked", changedById: actor.id });
      await queueAppointmentMessage(tx, row!, "confirmation", settings);
      await queueAppointmentMessage(tx, row!, "reminder", settings);
      await audit(
        {
          action: "appointment.booked",
          actorUserId: actor.id,
          entityType: "appointment",
          entityId: row!.id,
          patientId: input.patientId,
          detail: {
            start: input.start.toISOString(),
            end: end.toISOString(),
            providerId: input.providerId,
            siteId: slot.siteId,
            roomId,
          },
          request,
        },
        tx,
      );
      return row!;
    });
  } catch (error) {
    const { code, constraint } = pgCode(error);
    if (code === PG_EXCLUSION_VIOLATION && constraint === "appointments_no_provider_overlap")
      throw await clashError(input.providerId, input.start, end, settings.timeZone);
    if (code === PG_EXCLUSION_VIOLATION && constraint === "appointments_no_room_overlap")
      throw await roomClashError(roomId!, input.start, end, settings.timeZone);
    if (code === PG_CHECK_VIOLATION)
      throw new BookingError("The end must be after the start.", {
        status: 422,
        fieldErrors: { end: ["The end must be after the start."] },
      });
    throw error;
  }
}

/**
 * Queues the transaction behind any other booking or move for the same provider. The exclusion
 * constraint alone keeps the diary sound, but two transactions inserting clashing rows at once can
 * each wait on the other's uncommitted row and end in a deadlock (a 500, not a 409). With the lock
 * the second one inserts only after the first has committed and gets the clean clash.
 */
async function lockProviderDiary(tx: Tx, providerId: string) {
  await tx.execute(sql`select pg_advisory_xact_lock(hashtextextended(${`diary:${providerId}`}, 0))`);
}

async function loadForUpdate(tx: Tx, id: string) {
  const [row] = await tx.select().from(appointments).where(eq(appointments.id, id)).for("update");
  if (!row) throw new BookingError("No such appointment.", { status: 404 });
  return row;
}

/** Moves and/or resizes an appointment (drag, resize, or a new provider), re-checking every rule. */
export async function moveAppointment(
  actor: SessionUser,
  id: string,
  change: { start: Date; end?: Date; providerId?: string; siteId?: string; roomId?: string | null },
  request?: Request,
) {
  const settings = await practiceSchedule();
  let providerId = change.providerId;
  let end = change.end;
  let roomId: string | null = null;
  try {
    return await db.transaction(async (tx) => {
      const current = await loadForUpdate(tx, id);
      if (!isMovable(current.status))
        throw new BookingError(`A ${STATUS_LABEL[current.status].toLowerCase()} appointment cannot be moved.`, {
          status: 409,
        });
      providerId ??= current.providerId;
      await lockProviderDiary(tx, providerId);
      const duration = current.endsAt.getTime() - current.startsAt.getTime();
      end ??= new Date(change.start.getTime() + duration);
      // The site follows where the provider works on the new day unless one is asked for; the room
      // is kept when the site stays the same, else the provider's room there that day.
      const probe = await validateSlot(
        tx,
        {
          providerId,
          appointmentTypeId: current.appointmentTypeId,
          start: change.start,
          end,
          siteId: change.siteId,
          roomId: change.roomId,
        },
        settings.timeZone,
        { horizonDays: bookingHorizonDays(actor, settings) },
      );
      roomId = change.roomId !== undefined || probe.siteId !== current.siteId ? probe.roomId : current.roomId;
      const [row] = await tx
        .update(appointments)
        .set({
          startsAt: change.start,
          endsAt: end,
          providerId,
          siteId: probe.siteId,
          roomId,
          updatedAt: new Date(),
          revision: sql`${appointments.revision} + 1`,
        })
        .where(eq(appointments.id, id))
        .returning();
      await tx.insert(appointmentMoves).values({
        appointmentId: id,
        fromStartsAt: current.startsAt,
        fromEndsAt: current.endsAt,
        fromProviderId: current.providerId,
        toStartsAt: change.start,
        toEndsAt: end,
        toProviderId: providerId,
        movedById: actor.id,
      });
      await rescheduleReminder(tx, row!, settings);
      // Every move: a calendar update with the same UID and the new, higher SEQUENCE.
      await queueAppointmentMessage(tx, row!, "update", settings);
      await audit(
        {
          action: "appointment.moved",
          actorUserId: actor.id,
          entityType: "appointment",
          entityId: id,
          patientId: current.patientId,
          detail: {
            from: {
              start: current.startsAt.toISOString(),
              end: current.endsAt.toISOString(),
              providerId: current.providerId,
            },
            to: { start: change.start.toISOString(), end: end.toISOString(), providerId },
          },
          request,
        },
        tx,
      );
      return row!;
    });
  } catch (error) {
    const { code, constraint } = pgCode(error);
    if (code === PG_EXCLUSION_VIOLATION && constraint === "appointments_no_provider_overlap")
      throw await clashError(providerId!, change.start, end!, settings.timeZone, id);
    if (code === PG_EXCLUSION_VIOLATION && constraint === "appointments_no_room_overlap")
      throw await roomClashError(roomId!, change.start, end!, settings.timeZone, id);
    if (code === PG_CHECK_VIOLATION)
      throw new BookingError("The end must be after the start.", {
        status: 422,
        fieldErrors: { end: ["The end must be after the start."] },
      });
    throw error;
  }
}

/**
 * Changes the status (day flow), stamping who and when; a cancellation queues its notice.
 * Starting the exam also opens an exam row linked to the appointment, in the same transaction.
 */
export async function changeStatus(
  actor: SessionUser,
  id: string,
  to: Status,
  request?: Request,
  opts: { confirmOtherDay?: boolean } = {},
): Promise<{ appointment: typeof appointments.$inferSelect; examId?: string }> {
  const settings = await practiceSchedule();
  try {
    return await db.transaction(async (tx) => {
      const current = await loadForUpdate(tx, id);
      if (current.status === to) return { appointment: current };
      if (!canChangeStatus(current.status, to)) {
        throw new BookingError(
          `An appointment that is ${STATUS_LABEL[current.status].toLowerCase()} cannot be marked ${STATUS_LABEL[to].toLowerCase()}.`,
          { status: 409 },
        );
      }
      // Arrival, the exam, completion and non-attendance happen on the day: on any other day they need a yes.
      if (DAY_OF_VISIT_STATUSES.includes(to) && !opts.confirmOtherDay) {
        const [site] = await tx.select({ timeZone: sites.timeZone }).from(sites).where(eq(sites.id, current.siteId));
        const zone = site?.timeZone ?? settings.timeZone;
        const day = localParts(current.startsAt, zone).date;
        const today = localParts(new Date(), zone).date;
        if (day !== today)
          throw new BookingError(
            `This appointment is on ${formatLocal(current.startsAt, zone)}, not today (${today}). Confirm that you mean to mark it ${STATUS_LABEL[to].toLowerCase()}.`,
            { status: 409, fieldErrors: { confirmOtherDay: ["Confirm the change for another day."] } },
          );
      }
      if (to === "in_exam" && actor.role !== "owner" && actor.role !== "optometrist")
        throw new BookingError("Only an optometrist or the owner starts an exam.", { status: 403 });
      const now = new Date();
      const [row] = await tx
        .update(appointments)
        .set({ status: to, statusChangedAt: now, statusChangedById: actor.id, updatedAt: now })
        .where(eq(appointments.id, id))
        .returning();
      await tx
        .insert(appointmentStatusChanges)
        .values({ appointmentId: id, fromStatus: current.status, toStatus: to, changedById: actor.id, changedAt: now });
      let examId: string | undefined;
      if (to === "in_exam") {
        const [existing] = await tx.select({ id: exams.id }).from(exams).where(eq(exams.appointmentId, id)).limit(1);
        examId = existing?.id;
        if (!examId) {
          const [exam] = await tx
            .insert(exams)
            .values({
              patientId: current.patientId,
              optometristId: actor.id,
              appointmentId: id,
              examinedAt: now,
              status: "in_progress",
            })
            .returning({ id: exams.id });
          examId = exam!.id;
          await audit(
            {
              action: "exam.started",
              actorUserId: actor.id,
              entityType: "exam",
              entityId: examId,
              patientId: current.patientId,
              detail: { appointmentId: id },
              request,
            },
            tx,
          );
        }
      }
      if (to === "cancelled") await queueAppointmentMessage(tx, row!, "cancellation", settings);
      if (to === "cancelled" || to === "no_show") {
        // The reminder of a visit that will not happen is not sent.
        await tx
          .update(appointmentMessages)
          .set({ status: "skipped", skippedReason: `appointment ${STATUS_LABEL[to].toLowerCase()}` })
          .where(
            and(
              eq(appointmentMessages.appointmentId, id),
              eq(appointmentMessages.kind, "reminder"),
              eq(appointmentMessages.status, "queued"),
            ),
          );
      }
      await audit(
        {
          action: "appointment.status_changed",
          actorUserId: actor.id,
          entityType: "appointment",
          entityId: id,
          patientId: current.patientId,
          detail: { from: current.status, to },
          request,
        },
        tx,
      );
      return { appointment: row!, examId };
    });
  } catch (error) {
    const { code, constraint } = pgCode(error);
    // Reinstating a missed visit whose time has since been given away.
    if (code === PG_EXCLUSION_VIOLATION && constraint === "appointments_no_provider_overlap") {
      const [a] = await db.select().from(appointments).where(eq(appointments.id, id));
      throw await clashError(a!.providerId, a!.startsAt, a!.endsAt, settings.timeZone, id);
    }
    if (code === PG_EXCLUSION_VIOLATION && constraint === "appointments_no_room_overlap") {
      const [a] = await db.select().from(appointments).where(eq(appointments.id, id));
      throw await roomClashError(a!.roomId!, a!.startsAt, a!.endsAt, settings.timeZone, id);
    }
    throw error;
  }
}

export type CalendarEvent = {
  id: string;
  start: Date;
  end: Date;
  status: Status;
  providerId: string;
  providerName: string;
  patientId: string;
  patientName: string;
  typeName: string;
  typeId: string;
  siteId: string;
  siteName: string;
  roomName: string | null;
};

/** Appointments overlapping [start, end), optionally of one provider; cancelled ones only on request. */
export async function appointmentsBetween(
  start: Date,
  end: Date,
  opts: { providerId?: string; siteId?: string; includeCancelled?: boolean } = {},
): Promise<CalendarEvent[]> {
  const rows = await db
    .select({
      id: appointments.id,
      start: appointments.startsAt,
      end: appointments.endsAt,
      status: appointments.status,
      providerId: appointments.providerId,
      providerName: users.name,
      patientId: appointments.patientId,
      first: patients.firstName,
      last: patients.lastName,
      typeName: appointmentTypes.name,
      typeId: appointments.appointmentTypeId,
      siteId: appointments.siteId,
      siteName: sites.name,
      roomName: rooms.name,
    })
    .from(appointments)
    .innerJoin(patients, eq(patients.id, appointments.patientId))
    .innerJoin(users, eq(users.id, appointments.providerId))
    .innerJoin(appointmentTypes, eq(appointmentTypes.id, appointments.appointmentTypeId))
    .innerJoin(sites, eq(sites.id, appointments.siteId))
    .leftJoin(rooms, eq(rooms.id, appointments.roomId))
    .where(
      and(
        lt(appointments.startsAt, end),
        gt(appointments.endsAt, start),
        // Appointments never exceed 8 hours, so the start index bounds the scan from below.
        gt(appointments.startsAt, new Date(start.getTime() - 8 * 3_600_000)),
        opts.providerId ? eq(appointments.providerId, opts.providerId) : undefined,
        opts.siteId ? eq(appointments.siteId, opts.siteId) : undefined,
        opts.includeCancelled ? undefined : inArray(appointments.status, [...LIVE_STATUSES, "no_show"]),
      ),
    )
    .orderBy(asc(appointments.startsAt));
  return rows.map(({ first, last, ...r }) => ({ ...r, patientName: `${first} ${last}` }));
}

/**
 * The calendar's events as one JSON text, a `CalendarFeed` (~/lib/scheduling/calendar-feed): each
 * provider's and type's name once and one short row per appointment, which the browser expands.
 * A week of a busy practice is a thousand rows or more, so this reads plain arrays (no ORM
 * mapping, times as epoch milliseconds) and formats offsets with a per-quarter-hour cache.
 */
export async function calendarEventsJson(
  start: Date,
  end: Date,
  timeZone: string,
  opts: { providerId?: string; siteId?: string; includeCancelled?: boolean } = {},
): Promise<string> {
  const statuses: string[] = opts.includeCancelled
    ? [...LIVE_STATUSES, "no_show", "cancelled"]
    : [...LIVE_STATUSES, "no_show"];
  const values: unknown[] = [
    end.toISOString(),
    start.toISOString(),
    new Date(start.getTime() - 8 * 3_600_000).toISOString(),
    statuses,
  ];
  if (opts.providerId) values.push(opts.providerId);
  if (opts.siteId) values.push(opts.siteId);
  const result = await pool.query<string[]>({
    text: `select a.id, (extract(epoch from a.starts_at) * 1000)::bigint::text, (extract(epoch from a.ends_at) * 1000)::bigint::text,
                  a.status::text, a.provider_id, a.patient_id, p.first_name || ' ' || p.last_name, a.appointment_type_id,
                  u.name, t.name
             from appointments a
             join patients p on p.id = a.patient_id
             join users u on u.id = a.provider_id
             join appointment_types t on t.id = a.appointment_type_id
            where a.starts_at < $1 and a.ends_at > $2 and a.starts_at > $3 and a.status::text = any($4)
              ${opts.providerId ? "and a.provider_id = $5" : ""}
              ${opts.siteId ? `and a.site_id = $${values.length}` : ""}
            order by a.starts_at, a.id`,
    values,
    rowMode: "array",
  });
  const iso = zonedIsoFormatter(timeZone);
  const feed: CalendarFeed = { providers: {}, types: {}, events: [] };
  for (const [id, s, e, status, providerId, patientId, patientName, typeId, providerName, typeName] of result.rows) {
    feed.providers[providerId!] = providerName!;
    feed.types[typeId!] = typeName!;
    feed.events.push([
      id!,
      iso(Number(s)),
      iso(Number(e)),
      status as Status,
      providerId!,
      patientId!,
      patientName!,
      typeId!,
    ]);
  }
  return JSON.stringify(feed);
}

/**
 * Completes the appointment an exam was started from, inside the caller's transaction (signing
 * the exam), with its status-history row and audit entry. An appointment that is not in the
 * exam or waiting (already completed, cancelled, missed) is left as it is; returns whether it moved.
 */
export async function completeExamAppointment(
  tx: Tx,
  actor: SessionUser,
  appointmentId: string,
  request?: Request,
  now = new Date(),
): Promise<boolean> {
  const [current] = await tx.select().from(appointments).where(eq(appointments.id, appointmentId)).for("update");
  if (!current || !canChangeStatus(current.status, "completed")) return false;
  await tx
    .update(appointments)
    .set({ status: "completed", statusChangedAt: now, statusChangedById: actor.id, updatedAt: now })
    .where(eq(appointments.id, appointmentId));
  await tx.insert(appointmentStatusChanges).values({
    appointmentId,
    fromStatus: current.status,
    toStatus: "completed",
    changedById: actor.id,
    changedAt: now,
  });
  await audit(
    {
      action: "appointment.status_changed",
      actorUserId: actor.id,
      entityType: "appointment",
      entityId: appointmentId,
      patientId: current.patientId,
      detail: { from: current.status, to: "completed", reason: "exam signed" },
      request,
    },
    tx,
  );
  return true;
}
