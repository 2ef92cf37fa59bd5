import { and, eq, ne } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { action as bookAction, loader as bookLoader } from "~/routes/portal/book";
import { action as dayAction, loader as dayLoader } from "~/routes/schedule/day";
import { loader as docLoader } from "~/routes/portal/documents";
import { action as homeAction, loader as homeLoader } from "~/routes/portal/home";
import { action as invoicesAction, loader as invoicesLoader } from "~/routes/portal/invoices";
import { loader as rxListLoader } from "~/routes/portal/prescriptions";
import { loader as rxPdfLoader } from "~/routes/patients/prescription-pdf";
import { appointmentChangeRequests, appointments, appointmentTypes, payments, prescriptions, users } from "~/db/schema";
import { verifyPayLink } from "~/models/billing/checkout.server";
import { createInvoice, issueInvoice, recordDeskPayment } from "~/models/billing/invoices.server";
import { db } from "~/utils/db.server";
import { cookieFor, dataOf, makeRequest, run, statusOf, userByEmail } from "#tests/support/helpers";
import { finishedExam, fee, issuedInvoice, newPatient } from "./billing-support";

const ANOTHER = "00000000-0000-4000-8000-000000000000";

async function demoPatientId() {
  return (await userByEmail("patient@dioptra-demo.test")).patientId!;
}

let provider: { id: string } | undefined;
/** An optometrist of this test file's own, so its visits never clash with anyone else's diary. */
async function ownProvider() {
  provider ??= (
    await db
      .insert(users)
      .values({
        email: `portal-optom-${Date.now()}@example.test`,
        name: "Portal Test Optometrist",
        role: "optometrist",
      })
      .returning({ id: users.id })
  )[0]!;
  return provider;
}

/** A booked visit of `patientId` starting `hoursAhead` from now plus a random part of `spreadHours`, so tests do not clash. */
async function visit(patientId: string, hoursAhead: number, spreadHours = 24 * 200) {
  const optom = await ownProvider();
  const [type] = await db.select().from(appointmentTypes).limit(1);
  const start = new Date(
    Math.ceil((Date.now() + hoursAhead * 3_600_000) / 60_000) * 60_000 +
      Math.floor(Math.random() * spreadHours * 60) * 60_000,
  );
  const [a] = await db
    .insert(appointments)
    .values({
      patientId,
      providerId: optom.id,
      appointmentTypeId: type!.id,
      startsAt: start,
      endsAt: new Date(start.getTime() + 30 * 60_000),
      status: "booked",
    })
    .returning();
  return a!;
}

describe("the portal reaches only the signed-in patient's own rows", () => {
  it("answers 404 for another patient's visit, invoice, receipt and prescription, and changes nothing", async () => {
    const cookie = await cookieFor("patient");
    const other = await newPatient();
    const theirVisit = await visit(other.id, 24 * 30);
    const theirInvoice = await issuedInvoice([{ priceMinor: 4200 }]);
    const reception = await userByEmail("reception@dioptra-demo.test");
    const { paymentId } = (await recordDeskPayment({
      invoiceId: theirInvoice.id,
      method: "cash",
      amountMinor: 1000,
      reference: "",
      actorUserId: reception.id,
    })) as { paymentId: string };

    for (const id of [theirVisit.id, ANOTHER]) {
      expect(
        statusOf(
          await run(homeAction, makeRequest("/portal", { cookie, form: { intent: "cancel", appointmentId: id } })),
        ),
      ).toBe(404);
      expect(
        statusOf(
          await run(
            homeAction,
            makeRequest("/portal", { cookie, form: { intent: "move", appointmentId: id, message: "Any Tuesday" } }),
          ),
        ),
      ).toBe(404);
    }
    const [after] = await db
      .select({ status: appointments.status })
      .from(appointments)
      .where(eq(appointments.id, theirVisit.id));
    expect(after?.status).toBe("booked");
    expect(
      await db
        .select()
        .from(appointmentChangeRequests)
        .where(eq(appointmentChangeRequests.appointmentId, theirVisit.id)),
    ).toHaveLength(0);

    expect(
      statusOf(
        await run(invoicesAction, makeRequest("/portal/invoices", { cookie, form: { invoiceId: theirInvoice.id } })),
      ),
    ).toBe(404);
    expect(
      statusOf(
        await run(docLoader, makeRequest(`/portal/invoices/${theirInvoice.id}/invoice.pdf`, { cookie }), {
          id: theirInvoice.id,
        }),
      ),
    ).toBe(404);
    expect(
      statusOf(
        await run(docLoader, makeRequest(`/portal/payments/${paymentId}/receipt.pdf`, { cookie }), { id: paymentId }),
      ),
    ).toBe(404);
    expect(
      statusOf(
        await run(docLoader, makeRequest(`/portal/invoices/not-a-uuid/invoice.pdf`, { cookie }), { id: "not-a-uuid" }),
      ),
    ).toBe(404);

    // A prescription of another patient (the seeded caseload has many), by its real ids.
    const me = await demoPatientId();
    const [foreign] = await db
      .select({ id: prescriptions.id, patientId: prescriptions.patientId })
      .from(prescriptions)
      .where(ne(prescriptions.patientId, me))
      .limit(1);
    expect(foreign).toBeTruthy();
    expect(
      statusOf(
        await run(
          rxPdfLoader,
          makeRequest(`/patients/${foreign!.patientId}/prescriptions/${foreign!.id}/pdf`, { cookie }),
          { patientId: foreign!.patientId, prescriptionId: foreign!.id },
        ),
      ),
    ).toBe(404);

    // The lists show nothing of anyone else.
    const lists = JSON.stringify([
      dataOf(await run(homeLoader, makeRequest("/portal", { cookie }))),
      dataOf(await run(invoicesLoader, makeRequest("/portal/invoices", { cookie }))),
      dataOf(await run(rxListLoader, makeRequest("/portal/prescriptions", { cookie }))),
    ]);
    expect(lists).not.toContain(theirVisit.id);
    expect(
      dataOf<{ cancelling: string | null }>(
        await run(homeLoader, makeRequest(`/portal?cancel=${theirVisit.id}`, { cookie })),
      ).cancelling,
    ).toBeNull();
    expect(lists).not.toContain(theirInvoice.id);
    expect(lists).not.toContain(other.lastName);
  });

  it("is closed to staff roles", async () => {
    for (const role of ["owner", "optometrist", "receptionist"]) {
      const cookie = await cookieFor(role);
      expect(statusOf(await run(homeLoader, makeRequest("/portal", { cookie })))).toBe(403);
      expect(statusOf(await run(invoicesLoader, makeRequest("/portal/invoices", { cookie })))).toBe(403);
      expect(statusOf(await run(bookAction, makeRequest("/portal/book", { cookie, form: {} })))).toBe(403);
    }
  });
});

describe("the patient's own visits", () => {
  it("cancels a visit before the cut-off and refuses one inside it", async () => {
    const cookie = await cookieFor("patient");
    const me = await demoPatientId();
    const later = await visit(me, 24 * 40);
    // The check before cancelling is asked for the patient's own cancellable visit only.
    const asking = (id: string) =>
      run(homeLoader, makeRequest(`/portal?cancel=${id}`, { cookie })).then(
        (r) => dataOf<{ cancelling: string | null }>(r).cancelling,
      );
    expect(await asking(later.id)).toBe(later.id);
    expect(
      statusOf(
        await run(homeAction, makeRequest("/portal", { cookie, form: { intent: "cancel", appointmentId: later.id } })),
      ),
    ).toBe(302);
    expect(
      (await db.select({ s: appointments.status }).from(appointments).where(eq(appointments.id, later.id)))[0]?.s,
    ).toBe("cancelled");

    const soon = await visit(me, 2, 20);
    const refused = await run(
      homeAction,
      makeRequest("/portal", { cookie, form: { intent: "cancel", appointmentId: soon.id } }),
    );
    expect(await asking(soon.id)).toBeNull();
    expect(statusOf(refused)).toBe(409);
    expect(JSON.stringify(dataOf(refused))).toMatch(/until 24 hours before/);
    expect(
      (await db.select({ s: appointments.status }).from(appointments).where(eq(appointments.id, soon.id)))[0]?.s,
    ).toBe("booked");
  });

  it("records a request to move a visit, once per visit, and asks for the patient's words", async () => {
    const cookie = await cookieFor("patient");
    const v = await visit(await demoPatientId(), 24 * 50);
    expect(
      statusOf(
        await run(
          homeAction,
          makeRequest("/portal", { cookie, form: { intent: "move", appointmentId: v.id, message: "" } }),
        ),
      ),
    ).toBe(400);
    expect(
      statusOf(
        await run(
          homeAction,
          makeRequest("/portal", {
            cookie,
            form: { intent: "move", appointmentId: v.id, message: "A Friday morning, please" },
          }),
        ),
      ),
    ).toBe(302);
    expect(
      statusOf(
        await run(
          homeAction,
          makeRequest("/portal", { cookie, form: { intent: "move", appointmentId: v.id, message: "Or any Monday" } }),
        ),
      ),
    ).toBe(302);
    const rows = await db
      .select()
      .from(appointmentChangeRequests)
      .where(and(eq(appointmentChangeRequests.appointmentId, v.id), eq(appointmentChangeRequests.status, "open")));
    expect(rows).toHaveLength(1);
    expect(rows[0]!.message).toBe("Or any Monday");

    // The front desk sees it on the day list and marks it dealt with; a patient cannot.
    const desk = await cookieFor("receptionist");
    const list = dataOf<{ moveRequests: { id: string; message: string }[] }>(
      await run(dayLoader, makeRequest("/schedule/day", { cookie: desk })),
    );
    expect(list.moveRequests.find((r) => r.id === rows[0]!.id)?.message).toBe("Or any Monday");
    expect(
      statusOf(
        await run(
          dayAction,
          makeRequest("/schedule/day", { cookie, form: { intent: "settle-move-request", requestId: rows[0]!.id } }),
        ),
      ),
    ).toBe(403);
    expect(
      statusOf(
        await run(
          dayAction,
          makeRequest("/schedule/day", {
            cookie: desk,
            form: { intent: "settle-move-request", requestId: rows[0]!.id },
          }),
        ),
      ),
    ).toBe(302);
    const [settled] = await db
      .select()
      .from(appointmentChangeRequests)
      .where(eq(appointmentChangeRequests.id, rows[0]!.id));
    expect(settled).toMatchObject({ status: "done" });
    expect(settled!.handledById).toBeTruthy();
    expect(
      statusOf(
        await run(
          dayAction,
          makeRequest("/schedule/day", {
            cookie: desk,
            form: { intent: "settle-move-request", requestId: rows[0]!.id },
          }),
        ),
      ),
    ).toBe(409);
  });
});

describe("online booking", () => {
  it("offers free slots of online types only, books one, and refuses the same slot twice", async () => {
    const cookie = await cookieFor("patient");
    const [online] = await db
      .update(appointmentTypes)
      .set({ onlineBooking: true })
      .where(eq(appointmentTypes.name, "Comprehensive eye exam"))
      .returning();
    // The next Wednesday at least a week ahead: the demo optometrists work weekdays.
    const d = new Date(Date.now() + 8 * 86_400_000);
    while (d.getUTCDay() !== 3) d.setUTCDate(d.getUTCDate() + 1);
    const date = d.toISOString().slice(0, 10);
    const page = dataOf<{ slots: { start: string; providerId: string }[] }>(
      await run(bookLoader, makeRequest(`/portal/book?type=${online!.id}&date=${date}`, { cookie })),
    );
    expect(page.slots.length).toBeGreaterThan(0);
    const slot = page.slots.at(-1)!;
    // Choosing a time only shows it for a check: nothing is booked until the patient confirms.
    const review = await run(
      bookAction,
      makeRequest("/portal/book", {
        cookie,
        form: { appointmentTypeId: online!.id, providerId: slot.providerId, start: slot.start },
      }),
    );
    expect(statusOf(review)).toBe(200);
    expect(dataOf<{ review: { start: string } }>(review).review.start).toBe(slot.start);
    expect(
      await db
        .select()
        .from(appointments)
        .where(and(eq(appointments.patientId, await demoPatientId()), eq(appointments.startsAt, new Date(slot.start)))),
    ).toHaveLength(0);
    const form = { appointmentTypeId: online!.id, providerId: slot.providerId, start: slot.start, step: "confirm" };
    expect(statusOf(await run(bookAction, makeRequest("/portal/book", { cookie, form })))).toBe(302);
    const me = await demoPatientId();
    const [booked] = await db
      .select()
      .from(appointments)
      .where(and(eq(appointments.patientId, me), eq(appointments.startsAt, new Date(slot.start))));
    expect(booked?.status).toBe("booked");
    const again = await run(bookAction, makeRequest("/portal/book", { cookie, form }));
    expect(statusOf(again)).toBe(409);
    const after = dataOf<{ slots: { start: string; providerId: string }[] }>(
      await run(bookLoader, makeRequest(`/portal/book?type=${online!.id}&date=${date}`, { cookie })),
    );
    expect(after.slots.some((s) => s.start === slot.start && s.providerId === slot.providerId)).toBe(false);
  });

  it("refuses a kind of visit that is not open online", async () => {
    const cookie = await cookieFor("patient");
    const [closed] = await db
      .insert(appointmentTypes)
      .values({ name: `Private type ${Date.now()}`, durationMinutes: 30, onlineBooking: false })
      .returning();
    const optom = await userByEmail("optometrist@dioptra-demo.test");
    const res = await run(
      bookAction,
      makeRequest("/portal/book", {
        cookie,
        form: {
          appointmentTypeId: closed!.id,
          providerId: optom.id,
          start: new Date(Date.now() + 9 * 86_400_000).toISOString(),
          step: "confirm",
        },
      }),
    );
    expect(statusOf(res)).toBe(422);
  });
});

describe("invoices in the portal", () => {
  it("sends the patient into the signed pay-by-link flow for their own open invoice", async () => {
    const cookie = await cookieFor("patient");
    const me = await demoPatientId();
    const f = await fee("PORTAL", 3900);
    const exam = await finishedExam(me, f.id);
    const reception = await userByEmail("reception@dioptra-demo.test");
    const id = await createInvoice({
      patientId: me,
      examId: exam.id,
      lines: [{ feeItemId: f.id, quantity: 1 }],
      actorUserId: reception.id,
    });
    await issueInvoice(id, reception.id);
    const res = (await run(
      invoicesAction,
      makeRequest("/portal/invoices", { cookie, form: { invoiceId: id } }),
    )) as Response;
    expect(res.status).toBe(302);
    const token = res.headers.get("location")!.replace("/pay/", "");
    expect(verifyPayLink(token)).toMatchObject({ ok: true, invoiceId: id });
    const { paymentId } = (await recordDeskPayment({
      invoiceId: id,
      method: "card_desk",
      amountMinor: 3900,
      reference: "desk",
      actorUserId: reception.id,
    })) as { paymentId: string };
    const pdf = (await run(docLoader, makeRequest(`/portal/payments/${paymentId}/receipt.pdf`, { cookie }), {
      id: paymentId,
    })) as Response;
    expect(pdf.headers.get("content-type")).toBe("application/pdf");
    const list = dataOf<{ invoices: { id: string; status: string }[] }>(
      await run(invoicesLoader, makeRequest("/portal/invoices", { cookie })),
    );
    expect(list.invoices.find((i) => i.id === id)?.status).toBe("paid");
    expect(await db.select().from(payments).where(eq(payments.invoiceId, id))).toHaveLength(1);
  });
});
