import { and, eq } from "drizzle-orm";
import { beforeAll, describe, expect, it } from "vitest";
import { action as itemAction, loader as itemLoader } from "~/routes/api/appointments-item";
import { loader as eventsLoader } from "~/routes/api/appointments";
import { loader as appointmentPageLoader } from "~/routes/schedule/appointment";
import { action as dayAction } from "~/routes/schedule/day";
import { action as registerAction } from "~/routes/api/schedule-patients";
import { loader as searchLoader } from "~/routes/api/patients";
import {
  appointmentMessages,
  appointmentMoves,
  appointments,
  appointmentStatusChanges,
  auditLog,
  exams,
} from "~/db/schema";
import { db } from "~/utils/db.server";
import { expandCalendarFeed, type CalendarFeed } from "~/lib/scheduling/calendar-feed";
import { cookieFor, dataOf, makeRequest, run, statusOf, uniqueEmail } from "#tests/support/helpers";
import { demoIds, jobsFor, newPatient, postBooking } from "./schedule-fixtures";

let ids: Awaited<ReturnType<typeof demoIds>>;
beforeAll(async () => {
  ids = await demoIds();
});

const book = (patientId: string, start: string, extra: Record<string, unknown> = {}) =>
  postBooking({ patientId, providerId: ids.optometrist.id, appointmentTypeId: ids.examType.id, start, ...extra });

async function patch(id: string, body: unknown, role: "receptionist" | "optometrist" = "receptionist") {
  return (await run(
    itemAction,
    makeRequest(`/api/appointments/${id}`, { method: "PATCH", cookie: await cookieFor(role), json: body }),
    { appointmentId: id },
  )) as Response;
}

describe("booking through POST /api/appointments", () => {
  it("answers 201 with the appointment, its end from the type's length, and queues confirmation and reminder in the same transaction", async () => {
    const p = await newPatient();
    const res = await book(p.id, "2027-02-01T10:00:00+00:00");
    expect(res.status).toBe(201);
    const body = (await res.json()) as {
      appointment: { id: string; start: string; end: string; extendedProps: { status: string } };
    };
    expect(body.appointment.start).toBe("2027-02-01T10:00:00+00:00");
    expect(body.appointment.end).toBe("2027-02-01T10:30:00+00:00");
    expect(body.appointment.extendedProps.status).toBe("booked");
    const msgs = await db
      .select()
      .from(appointmentMessages)
      .where(eq(appointmentMessages.appointmentId, body.appointment.id));
    expect(msgs.map((m) => m.kind).sort()).toEqual(["confirmation", "reminder"]);
    const reminder = msgs.find((m) => m.kind === "reminder")!;
    expect(reminder.dueAt.toISOString()).toBe("2027-01-31T10:00:00.000Z"); // 24 h before, the default
    expect(await jobsFor("appointment-mail", "messageId", reminder.id)).toHaveLength(1);
    const [change] = await db
      .select()
      .from(appointmentStatusChanges)
      .where(eq(appointmentStatusChanges.appointmentId, body.appointment.id));
    expect(change).toMatchObject({ fromStatus: null, toStatus: "booked", changedById: ids.receptionist.id });
    const [row] = await db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.action, "appointment.booked"), eq(auditLog.entityId, body.appointment.id)));
    expect(row?.actorUserId).toBe(ids.receptionist.id);
  });

  it("refuses an overlapping booking with 409 naming the clashing appointment", async () => {
    const p1 = await newPatient();
    const p2 = await newPatient();
    expect((await book(p1.id, "2027-02-02T10:00:00Z")).status).toBe(201);
    const res = await book(p2.id, "2027-02-02T10:15:00Z");
    expect(res.status).toBe(409);
    const body = (await res.json()) as { error: string; clash: { patientName: string } };
    expect(body.error).toContain(`${p1.firstName} ${p1.lastName}`);
    expect(body.error).toContain("Comprehensive eye exam");
    expect(body.error).toContain("10:00");
    expect(body.clash.patientName).toBe(`${p1.firstName} ${p1.lastName}`);
    // Back to back is fine (half-open ranges).
    expect((await book(p2.id, "2027-02-02T10:30:00Z")).status).toBe(201);
  });

  it("50 concurrent attempts at one provider and slot make exactly one appointment and 49 clean 409s", async () => {
    const patientsList = await Promise.all(Array.from({ length: 50 }, () => newPatient()));
    const cookie = await cookieFor("receptionist");
    const results = await Promise.all(
      patientsList.map((p) =>
        postBooking(
          {
            patientId: p.id,
            providerId: ids.optometrist.id,
            appointmentTypeId: ids.examType.id,
            start: "2027-02-03T11:00:00Z",
          },
          "receptionist",
          cookie,
        ),
      ),
    );
    const statuses = results.map((r) => r.status).sort();
    // Every status at once, so a failure shows what the others got.
    expect(statuses).toEqual([201, ...Array.from({ length: 49 }, () => 409)]);
    const bodies = await Promise.all(
      results.filter((r) => r.status === 409).map((r) => r.json() as Promise<{ error: string }>),
    );
    expect(bodies.every((b) => b.error.endsWith("Choose another time or provider."))).toBe(true);
    const rows = await db
      .select()
      .from(appointments)
      .where(
        and(
          eq(appointments.providerId, ids.optometrist.id),
          eq(appointments.startsAt, new Date("2027-02-03T11:00:00Z")),
        ),
      );
    expect(rows).toHaveLength(1);
    // A correctness check, not a timing one: on a loaded machine fifty bookings may take a while.
  }, 90_000);

  it("the database itself refuses an overlap written past the code's checks", async () => {
    const p = await newPatient();
    expect((await book(p.id, "2027-02-04T14:00:00Z")).status).toBe(201);
    await expect(
      db.insert(appointments).values({
        patientId: p.id,
        providerId: ids.optometrist.id,
        appointmentTypeId: ids.examType.id,
        startsAt: new Date("2027-02-04T14:10:00Z"),
        endsAt: new Date("2027-02-04T14:20:00Z"),
      }),
    ).rejects.toMatchObject({ cause: { code: "23P01", constraint: "appointments_no_provider_overlap" } });
  });

  it("gives a clear 4xx with the reason for bad bookings", async () => {
    const p = await newPatient();
    const cases: [Record<string, unknown>, number, RegExp][] = [
      [{ start: "2020-01-06T10:00:00Z" }, 422, /in the past/],
      [{ start: "2027-02-05T07:00:00Z" }, 422, /Outside the provider's working hours on Friday \(09:00–17:30\)/],
      [{ start: "2027-02-05T13:15:00Z" }, 422, /lunch/],
      [{ start: "2027-02-07T10:00:00Z" }, 422, /does not work on Sundays/],
      [{ patientId: "00000000-0000-4000-8000-000000000000", start: "2027-02-05T10:00:00Z" }, 404, /No such patient/],
      [{ providerId: "00000000-0000-4000-8000-000000000000", start: "2027-02-05T10:00:00Z" }, 404, /No such provider/],
      [
        { providerId: ids.receptionist.id, start: "2027-02-05T10:00:00Z" },
        422,
        /may not perform Comprehensive eye exam/,
      ],
      [{ start: "2027-02-05T10:00:00Z", end: "2027-02-05T09:30:00Z" }, 400, /end must be after the start/],
      [{ start: "next tuesday" }, 400, /date and time/],
      [{ start: undefined }, 400, /date and time/],
      [{ appointmentTypeId: "not-a-uuid", start: "2027-02-05T10:00:00Z" }, 400, /appointment type/],
    ];
    for (const [extra, status, reason] of cases) {
      const res = await book(p.id, "2027-02-05T10:00:00Z", extra);
      const body = (await res.json()) as { error: string; fieldErrors: Record<string, string[]> };
      expect({ extra, status: res.status }).toEqual({ extra, status });
      expect(JSON.stringify(body)).toMatch(reason);
      expect(Object.keys(body.fieldErrors).length).toBeGreaterThan(0);
    }
    const none = await db.select().from(appointments).where(eq(appointments.patientId, p.id));
    expect(none).toHaveLength(0);
  });

  it("answers a malformed body with 400, no session with 401 and a patient's session with 403", async () => {
    const { action } = await import("~/routes/api/appointments");
    const bad = makeRequest("/api/appointments", {
      method: "POST",
      cookie: await cookieFor("receptionist"),
      headers: { "content-type": "application/json" },
    });
    const malformed = new Request(bad.url, { method: "POST", headers: bad.headers, body: "{not json" });
    expect(statusOf(await run(action, malformed))).toBe(400);
    expect(statusOf(await run(action, makeRequest("/api/appointments", { method: "POST", json: {} })))).toBe(401);
    const p = await newPatient();
    expect((await postBooking({ patientId: p.id }, "patient")).status).toBe(403);
  });
});

describe("events for the calendar (GET /api/appointments)", () => {
  it("returns a week's events with the practice zone's offsets on both sides of the spring change (2027-03-28)", async () => {
    const p = await newPatient();
    // Thursday before the change: 09:00 GMT is 09:00Z; Tuesday after: 09:00 BST is 08:00Z (Good Friday and
    // Easter Monday 2027 are bank holidays, when the practice is closed).
    expect((await book(p.id, "2027-03-25T09:00:00Z")).status).toBe(201);
    expect((await book(p.id, "2027-03-30T09:00:00+01:00")).status).toBe(201);
    // As FullCalendar asks in a named zone: wall times without an offset.
    const url = `/api/appointments?start=2027-03-22T00:00:00&end=2027-03-31T00:00:00&provider=${ids.optometrist.id}&timeZone=Europe%2FLondon`;
    const res = (await run(eventsLoader, makeRequest(url, { cookie: await cookieFor("receptionist") }))) as Response;
    expect(res.status).toBe(200);
    const events = expandCalendarFeed((await res.json()) as CalendarFeed).filter(
      (e) => e.extendedProps.patientId === p.id,
    );
    expect(events.map((e) => [e.start, e.end])).toEqual([
      ["2027-03-25T09:00:00+00:00", "2027-03-25T09:30:00+00:00"],
      ["2027-03-30T09:00:00+01:00", "2027-03-30T09:30:00+01:00"],
    ]);
  });

  it("keeps 09:00 wall time across the autumn change (2027-10-31) and refuses a working-hours check done in UTC", async () => {
    const p = await newPatient();
    expect((await book(p.id, "2027-10-29T09:00:00+01:00")).status).toBe(201); // 08:00Z
    expect((await book(p.id, "2027-11-01T09:00:00+00:00")).status).toBe(201); // 09:00Z
    // 08:30Z on 1 November is 08:30 GMT: before opening, though it was inside the hours in October.
    const early = await book(p.id, "2027-11-01T08:30:00Z");
    expect(early.status).toBe(422);
    const res = (await run(
      eventsLoader,
      makeRequest(`/api/appointments?start=2027-10-25T00:00:00%2B01:00&end=2027-11-02T00:00:00Z&provider=all`, {
        cookie: await cookieFor("optometrist"),
      }),
    )) as Response;
    const events = expandCalendarFeed((await res.json()) as CalendarFeed).filter(
      (e) => e.extendedProps.patientId === p.id,
    );
    expect(events.map((e) => e.start)).toEqual(["2027-10-29T09:00:00+01:00", "2027-11-01T09:00:00+00:00"]);
  });

  it("lists each event in the same shape as the booking answer gives it", async () => {
    const p = await newPatient();
    const booked = (await (await book(p.id, "2027-05-04T09:30:00+01:00")).json()) as {
      appointment: Record<string, unknown>;
    };
    const res = (await run(
      eventsLoader,
      makeRequest(
        `/api/appointments?start=2027-05-04T00:00:00%2B01:00&end=2027-05-05T00:00:00%2B01:00&provider=${ids.optometrist.id}`,
        { cookie: await cookieFor("receptionist") },
      ),
    )) as Response;
    const feed = (await res.json()) as CalendarFeed;
    const listed = expandCalendarFeed(feed).find((e) => e.id === booked.appointment.id);
    expect(listed).toEqual(booked.appointment);
    // Names are sent once per provider and type, not per event.
    expect(Object.keys(feed.providers)).toEqual([ids.optometrist.id]);
    expect(JSON.stringify(feed.events)).not.toContain(String(booked.appointment.title));
  });

  it("answers an unchanged week with 304 to its ETag, and a changed one with the new events", async () => {
    const p = await newPatient();
    const cookie = await cookieFor("receptionist");
    const url = `/api/appointments?start=2027-05-10T00:00:00%2B01:00&end=2027-05-17T00:00:00%2B01:00&provider=${ids.optometrist.id}`;
    const first = (await run(eventsLoader, makeRequest(url, { cookie }))) as Response;
    expect(first.status).toBe(200);
    const etag = first.headers.get("etag")!;
    expect(etag).toMatch(/^"[\w-]+"$/);
    expect(first.headers.get("cache-control")).toBe("private, no-cache");
    const again = (await run(
      eventsLoader,
      makeRequest(url, { cookie, headers: { "if-none-match": etag } }),
    )) as Response;
    expect(again.status).toBe(304);
    expect(await again.text()).toBe("");
    expect((await book(p.id, "2027-05-11T10:00:00+01:00")).status).toBe(201);
    const changed = (await run(
      eventsLoader,
      makeRequest(url, { cookie, headers: { "if-none-match": etag } }),
    )) as Response;
    expect(changed.status).toBe(200);
    expect(changed.headers.get("etag")).not.toBe(etag);
    const events = expandCalendarFeed((await changed.json()) as CalendarFeed);
    expect(events.some((e) => e.extendedProps.patientId === p.id)).toBe(true);
  });

  it("rejects a bad range with 400", async () => {
    const cookie = await cookieFor("receptionist");
    for (const q of [
      "",
      "?start=2027-01-01&end=2026-01-01",
      "?start=x&end=y",
      "?start=2027-01-01&end=2027-06-01",
      "?start=2027-01-01&end=2027-01-08&provider=nobody",
    ]) {
      expect(statusOf(await run(eventsLoader, makeRequest(`/api/appointments${q}`, { cookie })))).toBe(400);
    }
  });
});

describe("moving and resizing (PATCH /api/appointments/:id)", () => {
  it("moves to another day, refuses a clash with 409 leaving it unchanged, lengthens, and refuses end before start", async () => {
    const p1 = await newPatient();
    const p2 = await newPatient();
    const a = (await (await book(p1.id, "2027-02-08T10:00:00Z")).json()) as { appointment: { id: string } };
    await book(p2.id, "2027-02-09T10:00:00Z");
    const moved = await patch(a.appointment.id, { start: "2027-02-10T11:00:00Z", end: "2027-02-10T11:30:00Z" });
    expect(moved.status).toBe(200);
    const clash = await patch(a.appointment.id, { start: "2027-02-09T10:15:00Z", end: "2027-02-09T10:45:00Z" });
    expect(clash.status).toBe(409);
    expect(((await clash.json()) as { error: string }).error).toContain(`${p2.firstName} ${p2.lastName}`);
    const [row] = await db.select().from(appointments).where(eq(appointments.id, a.appointment.id));
    expect(row!.startsAt.toISOString()).toBe("2027-02-10T11:00:00.000Z");
    expect(row!.revision).toBe(1);
    // The move is in the appointment's history: from where, to where, by whom; the refused one is not.
    const moves = await db.select().from(appointmentMoves).where(eq(appointmentMoves.appointmentId, a.appointment.id));
    expect(
      moves.map((m) => [
        m.fromStartsAt.toISOString(),
        m.toStartsAt.toISOString(),
        m.toEndsAt.toISOString(),
        m.movedById,
      ]),
    ).toEqual([
      ["2027-02-08T10:00:00.000Z", "2027-02-10T11:00:00.000Z", "2027-02-10T11:30:00.000Z", ids.receptionist.id],
    ]);
    const longer = await patch(a.appointment.id, { start: "2027-02-10T11:00:00Z", end: "2027-02-10T12:00:00Z" });
    expect(longer.status).toBe(200);
    expect(((await longer.json()) as { appointment: { end: string } }).appointment.end).toBe(
      "2027-02-10T12:00:00+00:00",
    );
    expect((await patch(a.appointment.id, { start: "2027-02-10T11:00:00Z", end: "2027-02-10T10:00:00Z" })).status).toBe(
      400,
    );
    expect((await patch(a.appointment.id, { start: "2027-02-10T16:00:00Z", end: "2027-02-10T18:00:00Z" })).status).toBe(
      422,
    );
    const one = (await run(
      itemLoader,
      makeRequest(`/api/appointments/${a.appointment.id}`, { cookie: await cookieFor("receptionist") }),
      { appointmentId: a.appointment.id },
    )) as Response;
    expect(((await one.json()) as { appointment: { end: string } }).appointment.end).toBe("2027-02-10T12:00:00+00:00");
    // The reminder follows the move.
    const [reminder] = await db
      .select()
      .from(appointmentMessages)
      .where(and(eq(appointmentMessages.appointmentId, a.appointment.id), eq(appointmentMessages.kind, "reminder")));
    expect(reminder!.dueAt.toISOString()).toBe("2027-02-09T11:00:00.000Z");
  });

  it("answers 404 for an unknown appointment", async () => {
    expect((await patch("00000000-0000-4000-8000-000000000000", { status: "confirmed" })).status).toBe(404);
    expect((await patch("nope", { status: "confirmed" })).status).toBe(404);
  });
});

describe("day flow", () => {
  it("goes booked → confirmed → arrived → in exam → completed, stamping who and when; starting the exam opens a linked exam", async () => {
    const p = await newPatient();
    const a = ((await (await book(p.id, "2027-02-11T10:00:00Z")).json()) as { appointment: { id: string } })
      .appointment;
    expect((await patch(a.id, { status: "confirmed" })).status).toBe(200);
    // The visit is not today: an arrival needs the confirmation flag, and the refusal says why.
    const early = await patch(a.id, { status: "arrived" });
    expect(early.status).toBe(409);
    expect(((await early.json()) as { error: string }).error).toMatch(
      /not today .*Confirm that you mean to mark it arrived/,
    );
    expect((await patch(a.id, { status: "arrived", confirmOtherDay: true })).status).toBe(200);
    // The front desk does not start exams.
    const refused = await patch(a.id, { status: "in_exam", confirmOtherDay: true });
    expect(refused.status).toBe(403);
    // The optometrist starts it from the day list: an exam row linked to the appointment, then its page.
    const unconfirmed = (await run(
      dayAction,
      makeRequest("/schedule/day", {
        cookie: await cookieFor("optometrist"),
        form: { intent: "status", appointmentId: a.id, status: "in_exam" },
      }),
    )) as unknown;
    expect(statusOf(unconfirmed)).toBe(409);
    const form = { intent: "status", appointmentId: a.id, status: "in_exam", confirmOtherDay: "1" };
    const res = (await run(
      dayAction,
      makeRequest("/schedule/day", { cookie: await cookieFor("optometrist"), form }),
    )) as Response;
    expect(res.status).toBe(302);
    const [exam] = await db.select().from(exams).where(eq(exams.appointmentId, a.id));
    expect(exam).toMatchObject({ patientId: p.id, optometristId: ids.optometrist.id, status: "in_progress" });
    expect(res.headers.get("location")).toBe(`/patients/${p.id}/exams/${exam!.id}`);
    expect((await patch(a.id, { status: "completed", confirmOtherDay: true }, "optometrist")).status).toBe(200);
    // A finished visit is not reopened or moved.
    expect((await patch(a.id, { status: "booked" })).status).toBe(409);
    expect((await patch(a.id, { start: "2027-02-12T10:00:00Z" })).status).toBe(409);
    const trail = await db
      .select()
      .from(appointmentStatusChanges)
      .where(eq(appointmentStatusChanges.appointmentId, a.id))
      .orderBy(appointmentStatusChanges.id);
    expect(trail.map((t) => [t.fromStatus, t.toStatus, t.changedById])).toEqual([
      [null, "booked", ids.receptionist.id],
      ["booked", "confirmed", ids.receptionist.id],
      ["confirmed", "arrived", ids.receptionist.id],
      ["arrived", "in_exam", ids.optometrist.id],
      ["in_exam", "completed", ids.optometrist.id],
    ]);
  });

  it("a cancellation frees the slot, queues the notice and stops the reminder", async () => {
    const p = await newPatient();
    const a = ((await (await book(p.id, "2027-02-12T10:00:00Z")).json()) as { appointment: { id: string } })
      .appointment;
    expect((await patch(a.id, { status: "cancelled" })).status).toBe(200);
    const msgs = await db.select().from(appointmentMessages).where(eq(appointmentMessages.appointmentId, a.id));
    expect(msgs.find((m) => m.kind === "cancellation")?.status).toBe("queued");
    expect(msgs.find((m) => m.kind === "reminder")).toMatchObject({
      status: "skipped",
      skippedReason: "appointment cancelled",
    });
    const other = await newPatient();
    expect((await book(other.id, "2027-02-12T10:00:00Z")).status).toBe(201);
    // Reinstating the cancelled one is not allowed (finished), and a no-show reinstated onto a taken slot is a 409.
    const b = ((await (await book(p.id, "2027-02-12T11:00:00Z")).json()) as { appointment: { id: string } })
      .appointment;
    expect((await patch(b.id, { status: "no_show", confirmOtherDay: true })).status).toBe(200);
    expect((await book(other.id, "2027-02-12T11:00:00Z")).status).toBe(201);
    expect((await patch(b.id, { status: "booked" })).status).toBe(409);
  });
});

describe("patient lookup and inline registration for the booking dialog", () => {
  it("finds by part of the name (the patients list's search), and registers a new patient with field errors on bad input", async () => {
    const cookie = await cookieFor("receptionist");
    const found = (await run(searchLoader, makeRequest("/api/patients?q=achter", { cookie }))) as Response;
    expect(((await found.json()) as { results: { lastName: string }[] }).results.map((r) => r.lastName)).toContain(
      "Achterberg",
    );
    const bad = (await run(
      registerAction,
      makeRequest("/api/schedule-patients", {
        cookie,
        json: { firstName: "", lastName: "X", dateOfBirth: "2999-01-01" },
      }),
    )) as Response;
    expect(bad.status).toBe(400);
    const errors = ((await bad.json()) as { fieldErrors: Record<string, string[]> }).fieldErrors;
    expect(Object.keys(errors).sort()).toEqual(["dateOfBirth", "firstName"]);
    const email = uniqueEmail("new");
    const ok = (await run(
      registerAction,
      makeRequest("/api/schedule-patients", {
        cookie,
        json: { firstName: "Wilhelmina", lastName: "Ashcombe", dateOfBirth: "1990-03-04", email },
      }),
    )) as Response;
    expect(ok.status).toBe(201);
    const created = ((await ok.json()) as { patient: { id: string } }).patient;
    expect((await book(created.id, "2027-02-15T10:00:00Z")).status).toBe(201);
  });
});

describe("the appointment page", () => {
  it("names the patient, type and clinician, lists the visit's e-mails and links its exam once there is one", async () => {
    const p = await newPatient();
    const res = await book(p.id, "2027-06-14T09:00:00Z");
    expect(res.status).toBe(201);
    const { appointment } = (await res.json()) as { appointment: { id: string } };
    const cookie = await cookieFor("receptionist");
    const open = async () =>
      dataOf<{
        timeZone: string;
        appointment: {
          id: string;
          patientName: string;
          typeName: string;
          providerName: string;
          date: string;
          time: string;
          examUrl: string | null;
        };
        messages: { kind: string; status: string }[];
      }>(
        await run(appointmentPageLoader, makeRequest(`/schedule/appointments/${appointment.id}`, { cookie }), {
          appointmentId: appointment.id,
        }),
      );
    const page = await open();
    expect(page.appointment).toMatchObject({
      id: appointment.id,
      patientName: `${p.firstName} ${p.lastName}`,
      typeName: ids.examType.name,
      providerName: ids.optometrist.name,
      date: "2027-06-14",
      time: "10:00", // 09:00 UTC is 10:00 in London in June (British Summer Time)
      examUrl: null,
    });
    expect(page.timeZone).toBe("Europe/London");
    expect(page.messages.map((m) => m.kind).sort()).toEqual(["confirmation", "reminder"]);
    const [exam] = await db
      .insert(exams)
      .values({ patientId: p.id, optometristId: ids.optometrist.id, appointmentId: appointment.id })
      .returning();
    expect((await open()).appointment.examUrl).toBe(`/patients/${p.id}/exams/${exam!.id}`);
  });

  it("answers 404 for an unknown or malformed id", async () => {
    const cookie = await cookieFor("receptionist");
    for (const id of ["00000000-0000-4000-8000-000000000000", "not-an-id"])
      expect(
        statusOf(
          await run(appointmentPageLoader, makeRequest(`/schedule/appointments/${id}`, { cookie }), {
            appointmentId: id,
          }),
        ),
      ).toBe(404);
  });
});
