/** Reading one appointment: for its page (who, what, its e-mails, its exam) and for the schedule's JSON API. */
import { asc, desc, eq } from "drizzle-orm";
import { z } from "zod";
import { appointmentMessages, appointments, appointmentTypes, exams, patients, sites, users } from "~/db/schema";
import { db } from "~/utils/db.server";
import { eventJson } from "./schedule-api.server";
import { appointmentsBetween } from "./schedule.server";

/** The appointment with its clinician's, patient's and type's names; undefined when there is none. */
export async function appointmentForPage(appointmentId: string) {
  const [a] = await db
    .select({
      id: appointments.id,
      start: appointments.startsAt,
      end: appointments.endsAt,
      status: appointments.status,
      notes: appointments.notes,
      providerId: appointments.providerId,
      providerName: users.name,
      patientId: appointments.patientId,
      first: patients.firstName,
      last: patients.lastName,
      typeName: appointmentTypes.name,
    })
    .from(appointments)
    .innerJoin(users, eq(users.id, appointments.providerId))
    .innerJoin(patients, eq(patients.id, appointments.patientId))
    .innerJoin(appointmentTypes, eq(appointmentTypes.id, appointments.appointmentTypeId))
    .where(eq(appointments.id, appointmentId));
  return a;
}

/** The appointment's e-mails (confirmation, reminder, update, cancellation), oldest first. */
export async function appointmentMessagesOf(appointmentId: string) {
  return db
    .select()
    .from(appointmentMessages)
    .where(eq(appointmentMessages.appointmentId, appointmentId))
    .orderBy(asc(appointmentMessages.createdAt));
}

/** The id of the newest exam made for the appointment, or null when it has none. */
export async function latestExamIdOf(appointmentId: string) {
  const [exam] = await db
    .select({ id: exams.id })
    .from(exams)
    .where(eq(exams.appointmentId, appointmentId))
    .orderBy(desc(exams.createdAt))
    .limit(1);
  return exam?.id ?? null;
}

/** One appointment as the calendar's JSON event (cancelled ones included), or null when the id names none. */
export async function appointmentEvent(appointmentId: string, timeZone: string) {
  if (!z.uuid().safeParse(appointmentId).success) return null;
  const [a] = await db
    .select({ start: appointments.startsAt, end: appointments.endsAt, providerId: appointments.providerId })
    .from(appointments)
    .where(eq(appointments.id, appointmentId));
  if (!a) return null;
  const events = await appointmentsBetween(a.start, a.end, { providerId: a.providerId, includeCancelled: true });
  const e = events.find((x) => x.id === appointmentId);
  return e ? eventJson(e, timeZone) : null;
}

/** The time zone of the appointment's site, or undefined when there is no such appointment. */
export async function appointmentSiteTimeZone(appointmentId: string) {
  const [here] = await db
    .select({ timeZone: sites.timeZone })
    .from(appointments)
    .innerJoin(sites, eq(sites.id, appointments.siteId))
    .where(eq(appointments.id, appointmentId));
  return here?.timeZone;
}
