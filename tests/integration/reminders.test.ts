/**
 * Reminder e-mails through the pg-boss queue against real SMTP stand-ins: sent once with an .ics,
 * never twice, skipped for patients who opted out, retried while the SMTP server is down.
 */
import { and, eq } from "drizzle-orm";
import nodemailer from "nodemailer";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { appointmentMessages } from "~/db/schema";
import { db } from "~/utils/db.server";
import { startWorkers, stopJobs } from "~/utils/jobs.server";
import {
  APPOINTMENT_MAIL_QUEUE,
  deliverAppointmentMessage,
  sendReminderNow,
  useAppointmentMailSender,
} from "~/models/schedule/reminders.server";
import { cookieFor, makeRequest, mailTo, run } from "#tests/support/helpers";
import { UNIT } from "#tests/support/ports";
import { startMailStandIn, stopProcess } from "#tests/support/services";
import { demoIds, jobsFor, newPatient, postBooking } from "./schedule-fixtures";

// Retries one second apart (doubling) instead of thirty, so the outage test is quick.
process.env.MAIL_RETRY_DELAY_SECONDS = "1";

let ids: Awaited<ReturnType<typeof demoIds>>;
beforeAll(async () => {
  ids = await demoIds();
});
afterAll(async () => {
  useAppointmentMailSender(null);
  await stopJobs();
});

async function bookFor(patientId: string, start: string) {
  const res = await postBooking({
    patientId,
    providerId: ids.optometrist.id,
    appointmentTypeId: ids.examType.id,
    start,
  });
  expect(res.status).toBe(201);
  return ((await res.json()) as { appointment: { id: string } }).appointment.id;
}

async function message(appointmentId: string, kind: "confirmation" | "reminder" | "cancellation") {
  const [m] = await db
    .select()
    .from(appointmentMessages)
    .where(and(eq(appointmentMessages.appointmentId, appointmentId), eq(appointmentMessages.kind, kind)));
  return m!;
}

async function attachmentText(apiPort: number, messageId: string, index: number) {
  return (await fetch(`http://127.0.0.1:${apiPort}/messages/${messageId}/attachments/${index}`)).text();
}

async function waitFor<T>(fn: () => Promise<T>, ok: (v: T) => boolean, timeoutMs = 20_000): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const v = await fn();
    if (ok(v)) return v;
    if (Date.now() > deadline) throw new Error(`timed out; last value ${JSON.stringify(v)}`);
    await new Promise((r) => setTimeout(r, 200));
  }
}

describe("appointment e-mails", () => {
  it("sends the confirmation once with an .ics, and a second run sends nothing", async () => {
    const p = await newPatient();
    const id = await bookFor(p.id, "2027-04-05T10:00:00+01:00");
    const m = await message(id, "confirmation");
    const [first, second] = await Promise.all([deliverAppointmentMessage(m.id), deliverAppointmentMessage(m.id)]);
    expect([first, second].sort()).toEqual(["already done", "sent"]);
    expect(await deliverAppointmentMessage(m.id)).toBe("already done");
    const mails = await mailTo(p.email!);
    expect(mails).toHaveLength(1);
    expect(mails[0]!.subject).toBe("Appointment booked: Mon 5 Apr 2027, 10:00");
    expect(mails[0]!.text).toContain("Comprehensive eye exam with Tobias Wren");
    expect(mails[0]!.attachments.map((a) => a.filename)).toEqual(["appointment.ics"]);
    // RFC 5545: UTC times end in Z; 10:00 BST is 09:00Z.
    const ics = await attachmentText(UNIT.mailApi, mails[0]!.id, 0);
    expect(ics).toContain("BEGIN:VCALENDAR");
    expect(ics).toContain("METHOD:REQUEST");
    expect(ics).toContain("DTSTART:20270405T090000Z");
    expect(ics).toContain("DTEND:20270405T093000Z");
    expect(ics).toContain(`UID:appointment-${id}@dioptra`);
    const after = await message(id, "confirmation");
    expect(after).toMatchObject({ status: "sent", recipient: p.email, attempts: 1 });
  });

  it("does not e-mail a patient who opted out, and says why in the log", async () => {
    const p = await newPatient({ remindersByEmail: false });
    const id = await bookFor(p.id, "2027-04-05T11:00:00+01:00");
    const m = await message(id, "confirmation");
    expect(await deliverAppointmentMessage(m.id)).toBe("skipped");
    expect(await message(id, "confirmation")).toMatchObject({
      status: "skipped",
      skippedReason: "patient opted out of e-mail",
    });
    expect(await mailTo(p.email!)).toHaveLength(0);
  });

  it("queues the reminder for 24 hours before, waits until then, and sends a cancellation notice that cancels the .ics", async () => {
    const p = await newPatient();
    const id = await bookFor(p.id, "2027-04-06T10:00:00+01:00");
    const reminder = await message(id, "reminder");
    expect(reminder.dueAt.toISOString()).toBe("2027-04-05T09:00:00.000Z");
    const [job] = await jobsFor(APPOINTMENT_MAIL_QUEUE, "messageId", reminder.id);
    expect(new Date(job!.start_after).toISOString()).toBe("2027-04-05T09:00:00.000Z");
    // Run early (a stale job): nothing is sent.
    expect(await deliverAppointmentMessage(reminder.id)).toBe("not due");
    const { action } = await import("~/routes/api/appointments-item");
    const res = (await run(
      action,
      makeRequest(`/api/appointments/${id}`, {
        method: "PATCH",
        cookie: await cookieFor("receptionist"),
        json: { status: "cancelled" },
      }),
      { appointmentId: id },
    )) as Response;
    expect(res.status).toBe(200);
    const notice = await message(id, "cancellation");
    expect(await deliverAppointmentMessage(notice.id)).toBe("sent");
    const [mail] = await mailTo(p.email!);
    expect(mail!.subject).toMatch(/^Appointment cancelled/);
    const ics = await attachmentText(UNIT.mailApi, mail!.id, 0);
    expect(ics).toContain("METHOD:CANCEL");
    expect(ics).toContain("STATUS:CANCELLED");
    expect(await message(id, "reminder")).toMatchObject({ status: "skipped" });
  });

  it("lets the front desk send the reminder early, once: a second request is refused", async () => {
    const p = await newPatient();
    const id = await bookFor(p.id, "2027-04-08T10:00:00+01:00");
    expect(await sendReminderNow(ids.receptionist.id, id)).toEqual({ ok: true });
    const reminder = await message(id, "reminder");
    expect(reminder.dueAt.getTime()).toBeLessThanOrEqual(Date.now());
    expect(await deliverAppointmentMessage(reminder.id)).toBe("sent");
    const [mail] = await mailTo(p.email!);
    expect(mail!.subject).toBe("Reminder: your appointment on Thu 8 Apr 2027, 10:00");
    const again = await sendReminderNow(ids.receptionist.id, id);
    expect(again).toMatchObject({ ok: false, error: expect.stringContaining("not sent twice") });
    // The original job, due a day before, finds it done.
    expect(await deliverAppointmentMessage(reminder.id)).toBe("already done");
    expect(await mailTo(p.email!)).toHaveLength(1);
  });

  it("keeps a reminder waiting while the SMTP server is down and sends it once it is back", async () => {
    // A second mail stand-in on its own ports, which this test stops and starts again.
    const smtpPort = UNIT.smtp + 5;
    const apiPort = UNIT.mailApi + 5;
    let standIn = await startMailStandIn(smtpPort, apiPort);
    const transport = nodemailer.createTransport({
      host: "127.0.0.1",
      port: smtpPort,
      secure: false,
      ignoreTLS: true,
      connectionTimeout: 2000,
      greetingTimeout: 2000,
    });
    useAppointmentMailSender((mail) => transport.sendMail({ from: "Dioptra <no-reply@dioptra-demo.test>", ...mail }));
    try {
      const p = await newPatient();
      await stopProcess(standIn);
      // Booked while no worker runs; the app "restarts" (its queue connection closes) before any worker sees the job.
      const id = await bookFor(p.id, "2027-04-07T10:00:00+01:00");
      await stopJobs();
      await startWorkers([APPOINTMENT_MAIL_QUEUE], { pollingIntervalSeconds: 0.5 });
      const failed = await waitFor(
        () => message(id, "confirmation"),
        (m) => m.attempts >= 1 && Boolean(m.lastError),
        60_000,
      );
      expect(failed.status).toBe("queued");
      expect(failed.lastError).toMatch(/ECONNREFUSED|connect/i);
      standIn = await startMailStandIn(smtpPort, apiPort);
      const sent = await waitFor(
        () => message(id, "confirmation"),
        (m) => m.status === "sent",
        60_000,
      );
      expect(sent.attempts).toBeGreaterThanOrEqual(2);
      const mails = await mailTo(p.email!, apiPort);
      expect(mails).toHaveLength(1);
      expect(mails[0]!.attachments.map((a) => a.filename)).toEqual(["appointment.ics"]);
    } finally {
      useAppointmentMailSender(null);
      await stopJobs();
      await stopProcess(standIn);
    }
  }, 150_000);
});
