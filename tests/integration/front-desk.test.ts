import { randomBytes } from "node:crypto";
import { and, eq, sql } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { loader as patientsApi } from "~/routes/api/patients";
import { action as quickRegister } from "~/routes/api/schedule-patients";
import { action as invoiceAction } from "~/routes/billing/invoice";
import { loader as newInvoiceLoader } from "~/routes/billing/invoice-new";
import { loader as balancesLoader } from "~/routes/billing/balances";
import { action as registerAction } from "~/routes/patients/new";
import { appointments, appointmentTypes, patients, payments } from "~/db/schema";
import { db } from "~/utils/db.server";
import { isNoReplyAddress } from "~/utils/mail.server";
import { howToBook } from "~/models/schedule/recalls.server";
import { cookieFor, dataOf, makeRequest, run, statusOf, userByEmail } from "#tests/support/helpers";
import { fee, issuedInvoice } from "./billing-support";

const post = async (path: string, form: Record<string, string>) =>
  makeRequest(path, { method: "POST", cookie: await cookieFor("receptionist"), form });

describe("patient search", () => {
  it("counts every match, pages past the first results and ranks exact surnames, then prefixes, before other matches", async () => {
    const tag = randomBytes(3).toString("hex");
    const surname = `Quill${tag}`;
    // 30 patients whose names merely contain the word, 2 with it as the start of the surname, 2 with it as the surname.
    const rows = [
      ...Array.from({ length: 30 }, (_, i) => ({
        firstName: `${surname}a`,
        lastName: `Aardvark${String(i).padStart(2, "0")}${tag}`,
      })),
      { firstName: "Pru", lastName: `${surname}ington` },
      { firstName: "Ned", lastName: `${surname}ette` },
      { firstName: "Zara", lastName: surname },
      { firstName: "Yves", lastName: surname },
    ];
    await db.insert(patients).values(rows.map((r) => ({ ...r, dateOfBirth: "1970-05-05" })));
    const cookie = await cookieFor("receptionist");
    const first = await (
      (await run(patientsApi, makeRequest(`/api/patients?q=${surname}`, { cookie }))) as Response
    ).json();
    expect(first.total).toBe(34);
    expect(first.totalIsExact).toBe(true);
    expect(first.results).toHaveLength(20);
    expect(
      first.results.slice(0, 4).map((r: { firstName: string; lastName: string }) => `${r.firstName} ${r.lastName}`),
    ).toEqual([`Yves ${surname}`, `Zara ${surname}`, `Ned ${surname}ette`, `Pru ${surname}ington`]);
    const second = await (
      (await run(patientsApi, makeRequest(`/api/patients?q=${surname}&offset=20`, { cookie }))) as Response
    ).json();
    expect(second.results).toHaveLength(14);
    const ids = new Set([...first.results, ...second.results].map((r: { id: string }) => r.id));
    expect(ids.size).toBe(34);
    const bad = (await run(patientsApi, makeRequest(`/api/patients?q=${surname}&offset=-1`, { cookie }))) as Response;
    expect(bad.status).toBe(400);
    expect((await bad.json()).error).toMatch(/whole number/);
  });
});

describe("one duplicate check for every registration", () => {
  it("the booking form's quick registration refuses the same name and date of birth with the registration page's words, unless confirmed", async () => {
    const lastName = `Dupecheck${randomBytes(3).toString("hex")}`;
    const cookie = await cookieFor("receptionist");
    const body = { firstName: "Odile", lastName, dateOfBirth: "1981-03-14" };
    const call = async (json: unknown) => {
      try {
        return (await run(
          quickRegister,
          makeRequest("/api/schedule-patients", { method: "POST", cookie, json }),
        )) as Response;
      } catch (thrown) {
        return thrown as Response;
      }
    };
    expect((await call(body)).status).toBe(201);
    const again = await call({ ...body, firstName: "ODILE" });
    expect(again.status).toBe(409);
    const refusal = (await again.json()) as { error: string; duplicates: { lastName: string }[] };
    expect(refusal.duplicates.map((d) => d.lastName)).toEqual([lastName]);
    // The full registration page refuses with the same sentence.
    const page = await run(
      registerAction,
      makeRequest("/patients/new", { method: "POST", cookie, form: { ...body, sex: "unknown" } }),
    );
    expect(statusOf(page)).toBe(409);
    expect(dataOf<{ error: Record<string, string[]> }>(page).error[""]).toEqual([refusal.error]);
    expect(await db.select().from(patients).where(eq(patients.lastName, lastName))).toHaveLength(1);
    // Confirmed as a different person: registered.
    expect((await call({ ...body, confirmDuplicate: "yes" })).status).toBe(201);
    expect(await db.select().from(patients).where(eq(patients.lastName, lastName))).toHaveLength(2);
  });
});

describe("desk payments", () => {
  it("refuses an identical second payment within two minutes unless it is confirmed; a different reference is taken", async () => {
    const { id } = await issuedInvoice([{ priceMinor: 50000 }]);
    const pay = (extra: Record<string, string> = {}) =>
      post(`/billing/invoices/${id}`, {
        intent: "pay-desk",
        method: "card_desk",
        amount: "100",
        reference: "T-5521",
        ...extra,
      }).then((r) => run(invoiceAction, r, { invoiceId: id }));
    expect(statusOf(await pay())).toBe(302);
    const twice = await pay();
    expect(statusOf(twice)).toBe(409);
    expect(dataOf<{ error: Record<string, string[]> }>(twice).error.confirmRepeat?.[0]).toMatch(
      /The same payment \(£100\.00 by card, reference T-5521\) was recorded \d+ seconds ago\. If the patient really paid twice, tick the box/,
    );
    expect(await db.select().from(payments).where(eq(payments.invoiceId, id))).toHaveLength(1);
    // Another reference is another payment.
    expect(statusOf(await pay({ reference: "T-5522" }))).toBe(302);
    // Confirmed: recorded.
    expect(statusOf(await pay({ confirmRepeat: "yes" }))).toBe(302);
    expect(await db.select().from(payments).where(eq(payments.invoiceId, id))).toHaveLength(3);
    // Outside the window the same payment is taken without asking.
    await db
      .update(payments)
      .set({ createdAt: new Date(Date.now() - 3 * 60_000) })
      .where(eq(payments.invoiceId, id));
    expect(statusOf(await pay({ amount: "0.01", reference: "" }))).toBe(302);
    expect(statusOf(await pay({ amount: "0.01", reference: "" }))).toBe(409);
  });
});

describe("raising an invoice from an appointment and the balances list", () => {
  it("pre-fills the appointment type's fee and patient, and lists what each patient owes", async () => {
    const visitFee = await fee("VISIT", 4500);
    const [type] = await db
      .insert(appointmentTypes)
      .values({
        name: `Follow-up ${randomBytes(3).toString("hex")}`,
        durationMinutes: 20,
        defaultFeeItemId: visitFee.id,
      })
      .returning();
    const optom = await userByEmail("optometrist@dioptra-demo.test");
    const { id: invoiceId, patient } = await issuedInvoice([{ priceMinor: 12345 }]);
    const start = new Date(Date.UTC(2031, 2, 3, 9) + Math.floor(Math.random() * 1e5) * 60_000);
    const [appt] = await db
      .insert(appointments)
      .values({
        patientId: patient.id,
        providerId: optom.id,
        appointmentTypeId: type!.id,
        startsAt: start,
        endsAt: new Date(start.getTime() + 20 * 60_000),
        status: "completed",
      })
      .returning();
    const cookie = await cookieFor("receptionist");
    const page = dataOf<{
      suggestedFeeItemId: string;
      preselected: { id: string };
      appointment: { timeZone: string };
    }>(await run(newInvoiceLoader, makeRequest(`/billing/invoices/new?appointment=${appt!.id}`, { cookie })));
    expect(page.suggestedFeeItemId).toBe(visitFee.id);
    // The page writes the visit's date by its site's clock (the demo practice is in the UK).
    const [{ zone } = { zone: "" }] = (
      await db.execute<{ zone: string }>(
        sql`select coalesce((select time_zone from sites where id = ${appt!.siteId}), (select time_zone from practice_settings where id = 1)) as zone`,
      )
    ).rows;
    expect(page.appointment.timeZone).toBe(zone);
    expect(zone).toBe("Europe/London");
    // A kind of visit with no fee suggests none (the page then asks the desk to choose).
    const [unpriced] = await db
      .insert(appointmentTypes)
      .values({ name: `Collection ${randomBytes(3).toString("hex")}`, durationMinutes: 10 })
      .returning();
    const later = new Date(start.getTime() + 60 * 60_000);
    const [collection] = await db
      .insert(appointments)
      .values({
        patientId: patient.id,
        providerId: optom.id,
        appointmentTypeId: unpriced!.id,
        startsAt: later,
        endsAt: new Date(later.getTime() + 10 * 60_000),
        status: "completed",
      })
      .returning();
    const noFee = dataOf<{ suggestedFeeItemId: string | null }>(
      await run(newInvoiceLoader, makeRequest(`/billing/invoices/new?appointment=${collection!.id}`, { cookie })),
    );
    expect(noFee.suggestedFeeItemId).toBeNull();
    expect(page.preselected.id).toBe(patient.id);
    expect(
      statusOf(
        await run(newInvoiceLoader, makeRequest(`/billing/invoices/new?appointment=${randomUUIDLike()}`, { cookie })),
      ),
    ).toBe(404);
    const list = dataOf<{ rows: { patientId: string; owed: string; invoices: number }[] }>(
      await run(balancesLoader, makeRequest(`/billing/balances?q=${encodeURIComponent(patient.lastName)}`, { cookie })),
    );
    expect(list.rows).toEqual([expect.objectContaining({ patientId: patient.id, owed: "£123.45", invoices: 1 })]);
    expect(
      statusOf(await run(balancesLoader, makeRequest("/billing/balances", { cookie: await cookieFor("optometrist") }))),
    ).toBe(403);
    expect(invoiceId).toBeTruthy();
    expect(
      await db
        .select()
        .from(appointments)
        .where(and(eq(appointments.id, appt!.id), eq(appointments.patientId, patient.id))),
    ).toHaveLength(1);
  });
});

describe("recall e-mails never invite a reply nobody reads", () => {
  it("offers a reply only when replies reach the practice", () => {
    // common practice: "no-reply"/"do-not-reply" senders are not read.
    expect(isNoReplyAddress("no-reply@dioptra-demo.test")).toBe(true);
    expect(isNoReplyAddress("DoNotReply@dioptra-demo.test")).toBe(true);
    expect(isNoReplyAddress("desk@dioptra-demo.test")).toBe(false);
    expect(howToBook("01632 960 123", null)).not.toMatch(/reply/);
    expect(howToBook("01632 960 123", "desk@dioptra-demo.test")).toMatch(
      /^To book, call us on 01632 960 123, reply to this e-mail \(it reaches desk@dioptra-demo\.test\) or book online in your patient portal: http.*\/portal\/book\.$/,
    );
  });
});

function randomUUIDLike() {
  return "00000000-0000-4000-8000-000000000000";
}
