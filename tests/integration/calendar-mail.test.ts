/**
 * What patients' mail programs and calendars read: calendar updates for every move and
 * cancellation (one UID, rising SEQUENCE, RFC 5545 / RFC 5546), and the e-mails' own headers —
 * sender name, Reply-To, HTML part, Auto-Submitted (RFC 3834) and one-click List-Unsubscribe
 * (RFC 8058) — read back from the mail stand-in.
 */
import { and, asc, eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { action as unsubscribeAction, loader as unsubscribeLoader } from "~/routes/portal/unsubscribe";
import { appointmentMessages, auditLog, patients, practiceSettings, recallBatches, recallMessages } from "~/db/schema";
import { unfold } from "~/lib/calendar/ics";
import { db } from "~/utils/db.server";
import { stopJobs } from "~/utils/jobs.server";
import { signUnsubscribe } from "~/utils/mail.server";
import { deliverRecall } from "~/models/schedule/recalls.server";
import { APPOINTMENT_MAIL_QUEUE, deliverAppointmentMessage, sendReminderNow } from "~/models/schedule/reminders.server";
import { cookieFor, makeRequest, mailTo, run, statusOf } from "#tests/support/helpers";
import { UNIT } from "#tests/support/ports";
import { demoIds, jobsFor, newPatient, postBooking } from "./schedule-fixtures";

let ids: Awaited<ReturnType<typeof demoIds>>;
let practice: { name: string; email: string };
beforeAll(async () => {
  ids = await demoIds();
  const [p] = await db.select({ name: practiceSettings.name, email: practiceSettings.email }).from(practiceSettings);
  practice = p!;
  expect(practice.email).not.toBe("");
});
afterAll(async () => {
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

async function move(id: string, start: string) {
  const { action } = await import("~/routes/api/appointments-item");
  const res = (await run(
    action,
    makeRequest(`/api/appointments/${id}`, {
      method: "PATCH",
      cookie: await cookieFor("receptionist"),
      json: { start },
    }),
    { appointmentId: id },
  )) as Response;
  expect(res.status).toBe(200);
}

async function messages(appointmentId: string, kind: "confirmation" | "reminder" | "cancellation" | "update") {
  return db
    .select()
    .from(appointmentMessages)
    .where(and(eq(appointmentMessages.appointmentId, appointmentId), eq(appointmentMessages.kind, kind)))
    .orderBy(asc(appointmentMessages.sequence));
}

async function icsOf(messageId: string) {
  const ics = await (await fetch(`http://127.0.0.1:${UNIT.mailApi}/messages/${messageId}/attachments/0`)).text();
  // RFC 5545 §3.1: content lines are delimited by CRLF and SHOULD NOT be longer than 75 octets.
  for (const line of ics.split("\r\n")) expect(Buffer.byteLength(line, "utf8")).toBeLessThanOrEqual(75);
  return unfold(ics);
}

const prop = (lines: string[], name: string) => lines.find((l) => l.startsWith(`${name}:`) || l.startsWith(`${name};`));

describe("calendar updates", () => {
  it("every move sends an update with the same UID and a higher SEQUENCE; the cancellation a CANCEL above them all", async () => {
    const p = await newPatient({
      firstName: "Bartłomiej",
      lastName: `Wróblewski-Łukasiewicz-Sienkiewicz-${Date.now()}`,
    });
    const id = await bookFor(p.id, "2027-05-10T10:00:00+01:00");
    const [confirmation] = await messages(id, "confirmation");
    expect(await deliverAppointmentMessage(confirmation!.id)).toBe("sent");
    // The reminder has gone before the move: the case that used to send nothing.
    expect(await sendReminderNow(ids.receptionist.id, id)).toEqual({ ok: true });
    const [reminder] = await messages(id, "reminder");
    expect(await deliverAppointmentMessage(reminder!.id)).toBe("sent");

    await move(id, "2027-05-11T11:00:00+01:00");
    const [first] = await messages(id, "update");
    expect(first).toMatchObject({ sequence: 1, status: "queued" });
    // Sent through the queue: a pg-boss job exists for it, and two workers racing send it once.
    expect(await jobsFor(APPOINTMENT_MAIL_QUEUE, "messageId", first!.id)).toHaveLength(1);
    expect(
      (await Promise.all([deliverAppointmentMessage(first!.id), deliverAppointmentMessage(first!.id)])).sort(),
    ).toEqual(["already done", "sent"]);

    // Moved twice before the worker ran: the older update is skipped, the newer carries both changes.
    await move(id, "2027-05-12T09:30:00+01:00");
    await move(id, "2027-05-12T14:00:00+01:00");
    const updates = await messages(id, "update");
    expect(updates.map((u) => u.sequence)).toEqual([1, 2, 3]);
    expect(await deliverAppointmentMessage(updates[1]!.id)).toBe("skipped");
    expect(await deliverAppointmentMessage(updates[2]!.id)).toBe("sent");
    expect((await messages(id, "update"))[1]).toMatchObject({
      status: "skipped",
      skippedReason: "superseded by a later move",
    });

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
    const [cancellation] = await messages(id, "cancellation");
    expect(await deliverAppointmentMessage(cancellation!.id)).toBe("sent");

    const mails = (await mailTo(p.email!)).reverse(); // oldest first
    expect(mails.map((m) => m.subject)).toEqual([
      "Appointment booked: Mon 10 May 2027, 10:00",
      "Reminder: your appointment on Mon 10 May 2027, 10:00",
      "Appointment moved: now Tue 11 May 2027, 11:00",
      "Appointment moved: now Wed 12 May 2027, 14:00",
      "Appointment cancelled: Wed 12 May 2027, 14:00",
    ]);
    const files = await Promise.all(mails.map((m) => icsOf(m.id)));
    for (const f of files) {
      expect(prop(f, "UID")).toBe(`UID:appointment-${id}@dioptra`);
      // RFC 5546 §3.2.2 / §3.2.5: the organizer's address, and the attendee the request is for.
      expect(prop(f, "ORGANIZER")).toBe(`ORGANIZER;CN="${practice.name}":mailto:${practice.email}`);
      expect(prop(f, "ATTENDEE")).toMatch(
        new RegExp(
          `^ATTENDEE;CN="Bartłomiej Wróblewski-Łukasiewicz-Sienkiewicz-\\d+";.*:mailto:${p.email!.replace(/[.+]/g, "\\$&")}$`,
        ),
      );
    }
    expect(files.map((f) => prop(f, "METHOD"))).toEqual([
      "METHOD:REQUEST",
      "METHOD:REQUEST",
      "METHOD:REQUEST",
      "METHOD:REQUEST",
      "METHOD:CANCEL",
    ]);
    // RFC 5545 §3.8.7.4: SEQUENCE rises with each revision the organizer sends.
    expect(files.map((f) => prop(f, "SEQUENCE"))).toEqual([
      "SEQUENCE:0",
      "SEQUENCE:0",
      "SEQUENCE:1",
      "SEQUENCE:3",
      "SEQUENCE:4",
    ]);
    // 11:00 and 14:00 BST are 10:00Z and 13:00Z.
    expect(prop(files[2]!, "DTSTART")).toBe("DTSTART:20270511T100000Z");
    expect(prop(files[3]!, "DTSTART")).toBe("DTSTART:20270512T130000Z");
    expect(mails[4]!.attachments[0]!.contentType).toBe("text/calendar");
  });
});

describe("e-mail headers", () => {
  it("a reminder comes from the practice, has an HTML part, Auto-Submitted and one-click List-Unsubscribe that works", async () => {
    const p = await newPatient();
    const id = await bookFor(p.id, "2027-05-17T10:00:00+01:00");
    expect(await sendReminderNow(ids.receptionist.id, id)).toEqual({ ok: true });
    const [reminder] = await messages(id, "reminder");
    expect(await deliverAppointmentMessage(reminder!.id)).toBe("sent");
    const [mail] = await mailTo(p.email!);
    expect(mail!.from).toMatch(new RegExp(`^"?${practice.name}"? <`));
    expect(mail!.replyTo).toContain(practice.email);
    expect(mail!.html).toMatch(/^<!doctype html>/);
    expect(mail!.html).toContain("This is a reminder of your appointment:");
    expect(mail!.text).toContain("This is a reminder of your appointment:");
    // RFC 3834 §5: automatic messages say so, so auto-responders stay quiet.
    expect(mail!.headers["auto-submitted"]).toBe("auto-generated");
    // RFC 8058 §3.1: an HTTPS (here the test's HTTP) URI in List-Unsubscribe, and the one-click POST key.
    expect(mail!.headers["list-unsubscribe-post"]).toBe("List-Unsubscribe=One-Click");
    const url = new URL(/^<([^>]+)>$/.exec(mail!.headers["list-unsubscribe"]!)![1]!);
    expect(url.pathname).toMatch(/^\/unsubscribe\/[0-9a-f-]{36}\.reminders\.[\w-]{43}$/);
    expect(mail!.html).toContain(url.toString());
    const token = url.pathname.split("/")[2]!;

    // Opening the link changes nothing (mail scanners open links); the POST does.
    expect(await run(unsubscribeLoader, makeRequest(url.pathname), { token })).toMatchObject({
      list: "reminders",
      alreadyOff: false,
    });
    const [before] = await db.select().from(patients).where(eq(patients.id, p.id));
    expect(before!.remindersByEmail).toBe(true);
    // The one-click POST as a mail program sends it: no cookie, body "List-Unsubscribe=One-Click".
    const res = await run(
      unsubscribeAction,
      makeRequest(url.pathname, { method: "POST", form: { "List-Unsubscribe": "One-Click" } }),
      { token },
    );
    expect(res).toMatchObject({ ok: true, list: "reminders" });
    const [after] = await db.select().from(patients).where(eq(patients.id, p.id));
    expect(after).toMatchObject({ remindersByEmail: false, recallsByEmail: true });
    const logged = await db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.action, "patient.email_opt_out"), eq(auditLog.entityId, p.id)));
    expect(logged).toHaveLength(1);
    // The next appointment e-mail is not sent.
    const id2 = await bookFor(p.id, "2027-05-18T10:00:00+01:00");
    const [conf2] = await messages(id2, "confirmation");
    expect(await deliverAppointmentMessage(conf2!.id)).toBe("skipped");

    // A changed token records nothing.
    const forged = `${token.slice(0, -1)}${token.endsWith("A") ? "B" : "A"}`;
    expect(
      statusOf(
        await run(
          unsubscribeAction,
          makeRequest(`/unsubscribe/${forged}`, { method: "POST", form: { "List-Unsubscribe": "One-Click" } }),
          { token: forged },
        ),
      ),
    ).toBe(404);
    const other = await newPatient();
    const wrongList = signUnsubscribe(other.id, "recalls").replace(".recalls.", ".reminders.");
    expect(
      statusOf(
        await run(unsubscribeAction, makeRequest(`/unsubscribe/${wrongList}`, { method: "POST" }), {
          token: wrongList,
        }),
      ),
    ).toBe(404);
    expect((await db.select().from(patients).where(eq(patients.id, other.id)))[0]).toMatchObject({
      remindersByEmail: true,
      recallsByEmail: true,
    });
  });

  it("a confirmation has no List-Unsubscribe but is marked automatic, with the practice as sender", async () => {
    const p = await newPatient();
    const id = await bookFor(p.id, "2027-05-19T10:00:00+01:00");
    const [confirmation] = await messages(id, "confirmation");
    await deliverAppointmentMessage(confirmation!.id);
    const [mail] = await mailTo(p.email!);
    expect(mail!.headers["list-unsubscribe"]).toBeUndefined();
    expect(mail!.headers["auto-submitted"]).toBe("auto-generated");
    expect(mail!.replyTo).toContain(practice.email);
    expect(mail!.html).toContain("Your appointment is booked:");
  });

  it("a recall carries its own one-click opt-out, which stops recalls and nothing else", async () => {
    const p = await newPatient({ dateOfBirth: "1960-01-01" });
    const [batch] = await db.insert(recallBatches).values({ total: 1 }).returning();
    const [recall] = await db
      .insert(recallMessages)
      .values({ batchId: batch!.id, patientId: p.id, dueDate: "2026-11-01" })
      .returning();
    expect(await deliverRecall(recall!.id)).toBe("sent");
    const [mail] = await mailTo(p.email!);
    expect(mail!.headers["auto-submitted"]).toBe("auto-generated");
    expect(mail!.headers["list-unsubscribe-post"]).toBe("List-Unsubscribe=One-Click");
    const url = new URL(/^<([^>]+)>$/.exec(mail!.headers["list-unsubscribe"]!)![1]!);
    expect(mail!.text).toContain(url.toString());
    const token = url.pathname.split("/")[2]!;
    expect(token).toContain(".recalls.");
    expect(
      await run(
        unsubscribeAction,
        makeRequest(url.pathname, { method: "POST", form: { "List-Unsubscribe": "One-Click" } }),
        { token },
      ),
    ).toMatchObject({ ok: true });
    expect((await db.select().from(patients).where(eq(patients.id, p.id)))[0]).toMatchObject({
      remindersByEmail: true,
      recallsByEmail: false,
    });
  });
});
