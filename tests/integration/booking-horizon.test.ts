/** Bookings stay within the practice's booking horizon: the portal's (90 days) and the team's (730 days). */
import { and, eq } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { action as bookAction, loader as bookLoader } from "~/routes/portal/book";
import { action as itemAction } from "~/routes/api/appointments-item";
import { appointments, appointmentTypes, users } from "~/db/schema";
import { db } from "~/utils/db.server";
import { cookieFor, dataOf, makeRequest, run, statusOf } from "#tests/support/helpers";
import { demoIds, newPatient, postBooking } from "./schedule-fixtures";

/** A Wednesday at 10:00 UTC about `days` ahead (the demo optometrist works weekdays). */
function wednesdayAhead(days: number) {
  const d = new Date(Date.now() + days * 86_400_000);
  while (d.getUTCDay() !== 3) d.setUTCDate(d.getUTCDate() + 1);
  return `${d.toISOString().slice(0, 10)}T10:00:00Z`;
}

describe("booking horizon", () => {
  it("refuses a staff booking in year 9999 or past 730 days with a clear reason, and books within it", async () => {
    const { optometrist, examType } = await demoIds();
    const patient = await newPatient();
    for (const start of ["9999-06-02T10:00:00Z", wednesdayAhead(740)]) {
      const res = await postBooking({
        patientId: patient.id,
        providerId: optometrist.id,
        appointmentTypeId: examType.id,
        start,
      });
      expect(res.status).toBe(422);
      expect(((await res.json()) as { error: string }).error).toMatch(/at most 730 days ahead/);
    }
    expect(await db.select().from(appointments).where(eq(appointments.patientId, patient.id))).toHaveLength(0);
    const ok = await postBooking({
      patientId: patient.id,
      providerId: optometrist.id,
      appointmentTypeId: examType.id,
      start: wednesdayAhead(700),
    });
    expect(ok.status).toBe(201);
  });

  it("refuses moving an appointment past the horizon", async () => {
    const { optometrist, examType } = await demoIds();
    const patient = await newPatient();
    const booked = await postBooking({
      patientId: patient.id,
      providerId: optometrist.id,
      appointmentTypeId: examType.id,
      start: wednesdayAhead(30),
    });
    const { appointment } = (await booked.json()) as { appointment: { id: string } };
    const moved = await run(
      itemAction,
      makeRequest(`/api/appointments/${appointment.id}`, {
        method: "PATCH",
        cookie: await cookieFor("receptionist"),
        json: { start: "9999-06-02T10:00:00Z" },
      }),
      { appointmentId: appointment.id },
    );
    expect(statusOf(moved)).toBe(422);
  });

  it("refuses a portal booking past 90 days and never shows dates past it", async () => {
    const cookie = await cookieFor("patient");
    const [online] = await db
      .update(appointmentTypes)
      .set({ onlineBooking: true })
      .where(eq(appointmentTypes.name, "Comprehensive eye exam"))
      .returning();
    const { optometrist } = await demoIds();
    const [me] = await db
      .select({ id: users.patientId })
      .from(users)
      .where(eq(users.email, "patient@dioptra-demo.test"));
    for (const start of ["9999-06-02T10:00:00Z", wednesdayAhead(100)]) {
      const res = await run(
        bookAction,
        makeRequest("/portal/book", {
          cookie,
          form: { appointmentTypeId: online!.id, providerId: optometrist.id, start },
        }),
      );
      expect(statusOf(res)).toBe(422);
      expect(JSON.stringify(dataOf(res))).toMatch(/at most 90 days ahead/);
      expect(
        await db
          .select()
          .from(appointments)
          .where(and(eq(appointments.patientId, me!.id!), eq(appointments.startsAt, new Date(start)))),
      ).toHaveLength(0);
    }
    for (const date of ["9999-06-02", "2026-02-30", "0000-01-01"]) {
      const page = dataOf<{ date: string; lastDate: string }>(
        await run(bookLoader, makeRequest(`/portal/book?type=${online!.id}&date=${date}`, { cookie })),
      );
      expect(page.date).not.toBe(date);
      expect(page.date <= page.lastDate).toBe(true);
    }
  });
});
