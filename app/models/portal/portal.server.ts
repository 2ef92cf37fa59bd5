import { and, asc, desc, eq, gte, inArray, lt, ne, notInArray } from "drizzle-orm";
import {
  appointmentChangeRequests,
  appointments,
  appointmentTypes,
  invoices,
  opticalOrders,
  patients,
  payments,
  practiceSettings,
  providerBreaks,
  users,
  workingHours,
} from "~/db/schema";
import { invoiceSummaryColumns } from "~/models/billing/invoices.server";
import { addDays, slotsForDay, startOfLocalDay, weekdayOf } from "~/lib/scheduling";
import { closedReason, openingContext } from "~/models/schedule/closures.server";
import { requireRole } from "~/utils/auth.server";
import { db } from "~/utils/db.server";
import { notFound } from "~/utils/failure.server";

/** The signed-in patient and the one patient record they may reach. Anything else is 404. */
export async function requirePortalPatient(request: Request) {
  const user = await requireRole(request, ["patient"]);
  if (!user.patientId) notFound("This account is not linked to a patient record. Please contact the practice.");
  return { user, patientId: user.patientId };
}

export async function portalSettings() {
  const [s] = await db
    .select({
      name: practiceSettings.name,
      phone: practiceSettings.phone,
      email: practiceSettings.email,
      timeZone: practiceSettings.timeZone,
      currency: practiceSettings.currency,
      cancelCutoffHours: practiceSettings.portalCancelCutoffHours,
      bookingDays: practiceSettings.portalBookingDays,
    })
    .from(practiceSettings)
    .limit(1);
  return (
    s ?? {
      name: "The practice",
      phone: "",
      email: "",
      timeZone: "Europe/London",
      currency: "GBP",
      cancelCutoffHours: 24,
      bookingDays: 90,
    }
  );
}

/** One of the patient's own appointments, or 404 (another patient's id reveals nothing). */
export async function ownAppointment(patientId: string, appointmentId: string) {
  const [row] = await db
    .select()
    .from(appointments)
    .where(and(eq(appointments.id, appointmentId), eq(appointments.patientId, patientId)));
  if (!row) notFound();
  return row;
}

export async function visitsOf(patientId: string) {
  const rows = await db
    .select({
      id: appointments.id,
      start: appointments.startsAt,
      end: appointments.endsAt,
      status: appointments.status,
      typeName: appointmentTypes.name,
      providerName: users.name,
    })
    .from(appointments)
    .innerJoin(appointmentTypes, eq(appointmentTypes.id, appointments.appointmentTypeId))
    .innerJoin(users, eq(users.id, appointments.providerId))
    .where(eq(appointments.patientId, patientId))
    .orderBy(desc(appointments.startsAt))
    .limit(60);
  const ids = rows.map((r) => r.id);
  const open = ids.length
    ? await db
        .select({ appointmentId: appointmentChangeRequests.appointmentId, message: appointmentChangeRequests.message })
        .from(appointmentChangeRequests)
        .where(and(inArray(appointmentChangeRequests.appointmentId, ids), eq(appointmentChangeRequests.status, "open")))
    : [];
  return rows.map((r) => ({
    ...r,
    start: r.start.toISOString(),
    end: r.end.toISOString(),
    moveRequest: open.find((o) => o.appointmentId === r.id)?.message ?? null,
  }));
}

/** Whether the patient may still cancel online: a live, not-yet-started visit before the cut-off. */
export function cancellable(visit: { start: string | Date; status: string }, cutoffHours: number, now = Date.now()) {
  const start = new Date(visit.start).getTime();
  return (visit.status === "booked" || visit.status === "confirmed") && start - now >= cutoffHours * 3_600_000;
}

export async function invoicesOf(patientId: string) {
  const list = await db
    .select(invoiceSummaryColumns)
    .from(invoices)
    .where(and(eq(invoices.patientId, patientId), ne(invoices.status, "draft")))
    .orderBy(desc(invoices.issuedAt));
  const pays = list.length
    ? await db
        .select({
          id: payments.id,
          invoiceId: payments.invoiceId,
          amountMinor: payments.amountMinor,
          method: payments.method,
          receivedAt: payments.receivedAt,
        })
        .from(payments)
        .where(
          and(
            inArray(
              payments.invoiceId,
              list.map((i) => i.id),
            ),
            eq(payments.status, "succeeded"),
          ),
        )
        .orderBy(asc(payments.receivedAt))
    : [];
  return list.map((i) => ({
    ...i,
    issuedAt: i.issuedAt?.toISOString() ?? null,
    payments: pays
      .filter((p) => p.invoiceId === i.id)
      .map((p) => ({ ...p, receivedAt: p.receivedAt?.toISOString() ?? null })),
  }));
}

export async function ownInvoice(patientId: string, invoiceId: string) {
  const [row] = await db
    .select({ id: invoices.id, status: invoices.status })
    .from(invoices)
    .where(and(eq(invoices.id, invoiceId), eq(invoices.patientId, patientId), ne(invoices.status, "draft")));
  if (!row) notFound();
  return row;
}

export async function onlineTypes() {
  return db
    .select({
      id: appointmentTypes.id,
      name: appointmentTypes.name,
      durationMinutes: appointmentTypes.durationMinutes,
      performerRoles: appointmentTypes.performerRoles,
    })
    .from(appointmentTypes)
    .where(and(eq(appointmentTypes.active, true), eq(appointmentTypes.onlineBooking, true)))
    .orderBy(asc(appointmentTypes.name));
}

export type FreeSlot = { start: string; providerId: string; providerName: string };

/**
 * Free slots of an online-bookable visit type on one local date: each provider who performs it,
 * within their working hours and outside breaks, minus live appointments, from an hour from now.
 * A slot shown here can still be taken by someone else first; the booking itself is guarded by
 * the database's exclusion constraint.
 */
export async function freeSlots(
  typeId: string,
  date: string,
  timeZone: string,
  now = new Date(),
  siteId?: string,
): Promise<FreeSlot[]> {
  const [type] = (await onlineTypes()).filter((t) => t.id === typeId);
  if (!type) return [];
  const providers = await db
    .select({ id: users.id, name: users.name })
    .from(users)
    .where(and(eq(users.active, true), inArray(users.role, type.performerRoles)))
    .orderBy(asc(users.name));
  if (!providers.length) return [];
  const ids = providers.map((p) => p.id);
  const [hours, breaks] = await Promise.all([
    // At one site: only the days a provider works there.
    db
      .select()
      .from(workingHours)
      .where(and(inArray(workingHours.providerId, ids), siteId ? eq(workingHours.siteId, siteId) : undefined)),
    db.select().from(providerBreaks).where(inArray(providerBreaks.providerId, ids)),
  ]);
  const dayStart = startOfLocalDay(date, timeZone);
  const dayEnd = startOfLocalDay(addDays(date, 1), timeZone);
  const taken = await db
    .select({ providerId: appointments.providerId, start: appointments.startsAt, end: appointments.endsAt })
    .from(appointments)
    .where(
      and(
        inArray(appointments.providerId, ids),
        lt(appointments.startsAt, dayEnd),
        gte(appointments.endsAt, dayStart),
        notInArray(appointments.status, ["cancelled", "no_show"]),
      ),
    );
  const earliest = now.getTime() + 60 * 60_000;
  // Closed days, leave and the sites' opening hours: a slot offered here must pass the booking's own check.
  const opening = await openingContext(date, date);
  const weekday = weekdayOf(date);
  const slots: FreeSlot[] = [];
  for (const p of providers) {
    const own = <T extends { providerId: string }>(rows: T[]) => rows.filter((r) => r.providerId === p.id);
    const site = own(hours).find((h) => h.weekday === weekday)?.siteId;
    if (!site) continue;
    const starts = slotsForDay(date, timeZone, own(hours), own(breaks), type.durationMinutes);
    for (const s of starts) {
      const e = s.getTime() + type.durationMinutes * 60_000;
      if (s.getTime() < earliest) continue;
      if (closedReason(opening, { start: s, end: new Date(e), timeZone, siteId: site, provider: p })) continue;
      if (own(taken).some((t) => t.start.getTime() < e && t.end.getTime() > s.getTime())) continue;
      slots.push({ start: s.toISOString(), providerId: p.id, providerName: p.name });
    }
  }
  return slots.sort((a, b) => a.start.localeCompare(b.start) || a.providerName.localeCompare(b.providerName));
}

export async function patientName(patientId: string) {
  const [p] = await db
    .select({ firstName: patients.firstName, lastName: patients.lastName })
    .from(patients)
    .where(eq(patients.id, patientId));
  return p ?? null;
}

/** The patient's own spectacle and contact-lens orders, newest first. */
export async function ordersOf(patientId: string) {
  return db
    .select({
      id: opticalOrders.id,
      number: opticalOrders.number,
      kind: opticalOrders.kind,
      state: opticalOrders.state,
      frameLabel: opticalOrders.frameLabel,
      createdAt: opticalOrders.createdAt,
      stateChangedAt: opticalOrders.stateChangedAt,
    })
    .from(opticalOrders)
    .where(eq(opticalOrders.patientId, patientId))
    .orderBy(desc(opticalOrders.createdAt));
}
