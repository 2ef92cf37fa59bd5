/**
 * E-mails about appointments: confirmation on booking, a reminder a set time before, an update
 * after every move and a cancellation notice, each with an .ics attachment (one UID per
 * appointment; SEQUENCE rises with every move and once more for the cancellation). Each is one
 * row of appointment_messages (unique per appointment, kind and sequence) and one pg-boss job. The job locks the row, sends, and marks
 * it sent in the same transaction, so a message is never sent twice; a failed send is retried
 * with back-off and the row keeps the last error for the front desk's log.
 */
import { and, eq, sql } from "drizzle-orm";
import { buildIcs } from "~/lib/calendar/ics";
import { appointmentMessages, appointments, appointmentTypes, patients, rooms, sites, users } from "~/db/schema";
import { formatLocal } from "~/lib/scheduling/time";
import { db, type Tx } from "~/utils/db.server";
import { defineJob } from "~/utils/jobs.server";
import { env } from "~/utils/env.server";
import { prepareMail, sendMail, type Mail } from "~/utils/mail.server";
import { practiceSchedule } from "./schedule-settings.server";

export type MessageKind = "confirmation" | "reminder" | "cancellation" | "update";
type Appointment = typeof appointments.$inferSelect;
type Settings = {
  timeZone: string;
  reminderHoursBefore: number;
  name: string;
  phone: string;
  email: string;
  addressLine1: string;
  city: string;
};

export const APPOINTMENT_MAIL_QUEUE = "appointment-mail";

// Retries: 10 attempts after the first, 30 s doubling (about 8.5 hours in all), then the row shows "failed".
// MAIL_RETRY_DELAY_SECONDS shortens the first delay (the tests use 1 s).
const QUEUE_DEFAULTS = { retryLimit: 10, retryDelay: 30, retryBackoff: true, expireInSeconds: 120 };
export function mailRetryOptions() {
  return {
    retryLimit: QUEUE_DEFAULTS.retryLimit,
    retryBackoff: true,
    retryDelay: Number(process.env.MAIL_RETRY_DELAY_SECONDS ?? QUEUE_DEFAULTS.retryDelay),
  };
}

/** Writes the message row and queues its job in the caller's transaction. */
export async function queueAppointmentMessage(tx: Tx, appt: Appointment, kind: MessageKind, settings: Settings) {
  const dueAt =
    kind === "reminder" ? new Date(appt.startsAt.getTime() - settings.reminderHoursBefore * 3_600_000) : new Date();
  const tooLate = kind === "reminder" && dueAt.getTime() < Date.now();
  const [row] = await tx
    .insert(appointmentMessages)
    .values({
      appointmentId: appt.id,
      kind,
      sequence: kind === "update" ? appt.revision : 0,
      dueAt,
      status: tooLate ? "skipped" : "queued",
      skippedReason: tooLate
        ? `booked less than ${settings.reminderHoursBefore} h ahead; the confirmation serves`
        : null,
    })
    .onConflictDoNothing()
    .returning({ id: appointmentMessages.id });
  if (!row || tooLate) return;
  await appointmentMail.enqueue(
    { messageId: row.id },
    {
      tx,
      startAfter: kind === "reminder" ? dueAt : undefined,
      singletonKey: `${row.id}:${appt.revision}`,
      ...mailRetryOptions(),
    },
  );
}

/** After a move: the reminder goes out the set time before the new start (if not already sent). */
export async function rescheduleReminder(tx: Tx, appt: Appointment, settings: Settings) {
  const dueAt = new Date(appt.startsAt.getTime() - settings.reminderHoursBefore * 3_600_000);
  const [existing] = await tx
    .select()
    .from(appointmentMessages)
    .where(and(eq(appointmentMessages.appointmentId, appt.id), eq(appointmentMessages.kind, "reminder")));
  if (!existing) return queueAppointmentMessage(tx, appt, "reminder", settings);
  if (existing.status === "sent") return;
  const tooLate = dueAt.getTime() < Date.now();
  await tx
    .update(appointmentMessages)
    .set({
      dueAt,
      status: tooLate ? "skipped" : "queued",
      skippedReason: tooLate ? `moved to less than ${settings.reminderHoursBefore} h ahead` : null,
      lastError: null,
    })
    .where(eq(appointmentMessages.id, existing.id));
  if (!tooLate)
    await appointmentMail.enqueue(
      { messageId: existing.id },
      { tx, startAfter: dueAt, singletonKey: `${existing.id}:${appt.revision}`, ...mailRetryOptions() },
    );
}

/** The address calendar replies and ORGANIZER use: the practice's own, else the sending address. */
function organizerEmail(settings: Settings) {
  if (settings.email) return settings.email;
  const m = /<([^>]+)>/.exec(env.MAIL_FROM);
  return (m ? m[1]! : env.MAIL_FROM).trim();
}

/**
 * The calendar file for the appointment: REQUEST for bookings, reminders and moves, CANCEL for
 * cancellations. The SEQUENCE is the appointment's revision (raised by every move), one more for
 * the cancellation, so each file replaces the one before it in the patient's calendar.
 */
export function appointmentIcs(input: {
  id: string;
  revision: number;
  start: Date;
  end: Date;
  title: string;
  description: string;
  location: string;
  cancelled: boolean;
  organizer: { name: string; email: string };
  attendee: { name: string; email: string };
}) {
  return buildIcs({
    method: input.cancelled ? "CANCEL" : "REQUEST",
    uid: `appointment-${input.id}@dioptra`,
    sequence: input.revision + (input.cancelled ? 1 : 0),
    stamp: new Date(),
    start: input.start,
    end: input.end,
    summary: input.title,
    description: input.description,
    location: input.location,
    organizer: input.organizer,
    attendee: input.attendee,
    productId: "-//Dioptra//Schedule//EN",
  });
}

type Loaded = {
  message: typeof appointmentMessages.$inferSelect;
  appt: Appointment;
  patient: { firstName: string; lastName: string; email: string | null; remindersByEmail: boolean };
  typeName: string;
  providerName: string;
  /** Where the visit is; without it the practice's own address is given. */
  site?: { name: string; addressLine1: string; city: string; phone: string; siteCount: number } | null;
  roomName?: string | null;
};

export function composeAppointmentMail(l: Loaded, settings: Settings): Mail {
  const when = formatLocal(l.appt.startsAt, settings.timeZone);
  // The site's address (and room) when the practice has several sites; else the practice's.
  const site = l.site && l.site.siteCount > 1 ? l.site : null;
  const place = site
    ? [`${settings.name} at ${site.name}`, site.addressLine1, site.city, l.roomName].filter(Boolean).join(", ")
    : [settings.name, settings.addressLine1, settings.city].filter(Boolean).join(", ");
  const phoneNumber = site?.phone || settings.phone;
  const phone = phoneNumber ? ` on ${phoneNumber}` : "";
  const hello = `Dear ${l.patient.firstName} ${l.patient.lastName},`;
  const what = `${l.typeName} with ${l.providerName}`;
  const kind = l.message.kind;
  const subject =
    kind === "confirmation"
      ? `Appointment booked: ${when}`
      : kind === "reminder"
        ? `Reminder: your appointment on ${when}`
        : kind === "update"
          ? `Appointment moved: now ${when}`
          : `Appointment cancelled: ${when}`;
  const body =
    kind === "confirmation"
      ? `${hello}\n\nYour appointment is booked:\n\n  ${what}\n  ${when} (${settings.timeZone} time)\n  ${place}\n\nThe attached calendar file adds it to your calendar. To change or cancel it, call us${phone}.\n`
      : kind === "reminder"
        ? `${hello}\n\nThis is a reminder of your appointment:\n\n  ${what}\n  ${when} (${settings.timeZone} time)\n  ${place}\n\nPlease bring your current glasses or contact lenses. To change or cancel, call us${phone}.\n`
        : kind === "update"
          ? `${hello}\n\nYour appointment has been moved. The new time is:\n\n  ${what}\n  ${when} (${settings.timeZone} time)\n  ${place}\n\nThe attached calendar file moves it in your calendar. If the new time does not suit you, call us${phone}.\n`
          : `${hello}\n\nYour appointment has been cancelled:\n\n  ${what}\n  ${when}\n\nThe attached calendar file removes it from your calendar. To book another time, call us${phone}.\n`;
  const ics = appointmentIcs({
    id: l.appt.id,
    revision: l.appt.revision,
    start: l.appt.startsAt,
    end: l.appt.endsAt,
    title: `${l.typeName} at ${settings.name}`,
    description: `${what}.`,
    location: place,
    cancelled: kind === "cancellation",
    organizer: { name: settings.name, email: organizerEmail(settings) },
    attendee: { name: `${l.patient.firstName} ${l.patient.lastName}`, email: l.patient.email! },
  });
  return {
    to: l.patient.email!,
    subject,
    text: `${body}\n${settings.name}\n`,
    attachments: [
      {
        filename: kind === "cancellation" ? "cancelled-appointment.ics" : "appointment.ics",
        content: ics,
        contentType: `text/calendar; charset=utf-8; method=${kind === "cancellation" ? "CANCEL" : "REQUEST"}`,
      },
    ],
    // Reminders are the e-mail a patient may stop without stopping the rest (RFC 8058 one-click).
    ...(kind === "reminder" ? { unsubscribe: { patientId: l.appt.patientId, list: "reminders" as const } } : {}),
  };
}

type Sender = (mail: Mail) => Promise<unknown>;
let sender: Sender = sendMail;
/** Points the appointment e-mails at another SMTP transport (tests use a second stand-in). */
export function useAppointmentMailSender(next: Sender | null) {
  sender = next ?? sendMail;
}

/** Why a message should not be sent now, or null to send it. */
function reasonToSkip(l: Loaded): string | null {
  const { kind } = l.message;
  if (kind !== "cancellation" && (l.appt.status === "cancelled" || l.appt.status === "no_show"))
    return `appointment ${l.appt.status === "cancelled" ? "cancelled" : "missed"}`;
  // Moved again before this update went: the later update carries the newest time and sequence.
  if (kind === "update" && l.appt.revision !== l.message.sequence) return "superseded by a later move";
  if (kind === "reminder" && l.appt.startsAt.getTime() < Date.now()) return "appointment already started";
  if (!l.patient.remindersByEmail) return "patient opted out of e-mail";
  if (!l.patient.email) return "no e-mail address on record";
  return null;
}

export type DeliveryResult = "sent" | "skipped" | "already done" | "not due";

/** The job: send one message at most once. Throws on a failed send so the queue retries it. */
export async function deliverAppointmentMessage(
  messageId: string,
  job: { retryCount: number; retryLimit: number } = { retryCount: 0, retryLimit: 0 },
): Promise<DeliveryResult> {
  const settings = await practiceSchedule();
  try {
    return await db.transaction(async (tx) => {
      const [row] = await tx
        .select({
          message: appointmentMessages,
          appt: appointments,
          patient: {
            firstName: patients.firstName,
            lastName: patients.lastName,
            email: patients.email,
            remindersByEmail: patients.remindersByEmail,
          },
          typeName: appointmentTypes.name,
          providerName: users.name,
          site: {
            name: sites.name,
            addressLine1: sites.addressLine1,
            city: sites.city,
            phone: sites.phone,
            siteCount: sql<number>`(select count(*)::int from sites where active)`,
          },
          roomName: rooms.name,
        })
        .from(appointmentMessages)
        .innerJoin(appointments, eq(appointments.id, appointmentMessages.appointmentId))
        .innerJoin(patients, eq(patients.id, appointments.patientId))
        .innerJoin(appointmentTypes, eq(appointmentTypes.id, appointments.appointmentTypeId))
        .innerJoin(users, eq(users.id, appointments.providerId))
        .innerJoin(sites, eq(sites.id, appointments.siteId))
        .leftJoin(rooms, eq(rooms.id, appointments.roomId))
        .where(eq(appointmentMessages.id, messageId))
        .for("update", { of: appointmentMessages });
      if (!row || row.message.status === "sent" || row.message.status === "skipped") return "already done";
      // A reminder job queued before the appointment was moved later: the newer job will send it.
      if (row.message.kind === "reminder" && row.message.dueAt.getTime() > Date.now() + 60_000) return "not due";
      const skip = reasonToSkip(row);
      if (skip) {
        await tx
          .update(appointmentMessages)
          .set({ status: "skipped", skippedReason: skip })
          .where(eq(appointmentMessages.id, messageId));
        return "skipped";
      }
      const mail = await prepareMail(composeAppointmentMail(row, settings));
      await sender(mail);
      await tx
        .update(appointmentMessages)
        .set({
          status: "sent",
          sentAt: new Date(),
          recipient: mail.to,
          attempts: row.message.attempts + 1,
          lastError: null,
        })
        .where(eq(appointmentMessages.id, messageId));
      return "sent";
    });
  } catch (error) {
    const last = job.retryCount >= job.retryLimit;
    await db
      .update(appointmentMessages)
      .set({
        attempts: job.retryCount + 1,
        lastError: (error as Error).message.slice(0, 500),
        status: last ? "failed" : "queued",
      })
      .where(and(eq(appointmentMessages.id, messageId), eq(appointmentMessages.status, "queued")));
    throw error;
  }
}

export const appointmentMail = defineJob<{ messageId: string }>(
  APPOINTMENT_MAIL_QUEUE,
  async (data, job) => {
    await deliverAppointmentMessage(data.messageId, job);
  },
  QUEUE_DEFAULTS,
);

/**
 * The front desk's "send the reminder now": the appointment's one reminder goes out at once
 * instead of at its set time. Refused when it has already been sent (never twice) or the visit is over.
 */
export async function sendReminderNow(
  actorId: string,
  appointmentId: string,
  request?: Request,
): Promise<{ ok: true } | { ok: false; error: string }> {
  const { audit } = await import("~/utils/audit.server");
  const settings = await practiceSchedule();
  return db.transaction(async (tx) => {
    const [appt] = await tx.select().from(appointments).where(eq(appointments.id, appointmentId)).for("update");
    if (!appt) return { ok: false as const, error: "No such appointment." };
    if (!["booked", "confirmed"].includes(appt.status) || appt.startsAt.getTime() < Date.now())
      return { ok: false as const, error: "Reminders are sent only for appointments still to come." };
    let [m] = await tx
      .select()
      .from(appointmentMessages)
      .where(and(eq(appointmentMessages.appointmentId, appointmentId), eq(appointmentMessages.kind, "reminder")))
      .for("update");
    if (m?.status === "sent")
      return {
        ok: false as const,
        error: `The reminder was already sent (${formatLocal(m.sentAt!, settings.timeZone)}); it is not sent twice.`,
      };
    const now = new Date();
    if (!m)
      [m] = await tx.insert(appointmentMessages).values({ appointmentId, kind: "reminder", dueAt: now }).returning();
    else
      await tx
        .update(appointmentMessages)
        .set({ dueAt: now, status: "queued", skippedReason: null })
        .where(eq(appointmentMessages.id, m.id));
    await appointmentMail.enqueue(
      { messageId: m!.id },
      { tx, singletonKey: `${m!.id}:now:${now.getTime()}`, ...mailRetryOptions() },
    );
    await audit(
      {
        action: "appointment.reminder_sent_now",
        actorUserId: actorId,
        entityType: "appointment",
        entityId: appointmentId,
        patientId: appt.patientId,
        request,
      },
      tx,
    );
    return { ok: true as const };
  });
}
