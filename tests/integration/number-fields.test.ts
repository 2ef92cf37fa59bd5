/**
 * Number fields in the settings and billing forms read plain decimal numbers only. Number() (and
 * so z.coerce.number()) reads "0x10" as 16, "1e1" as 10, "Infinity" as Infinity and " " as 0
 * (ECMAScript StringNumericLiteral); each of those must come back as a field error, saving nothing.
 */
import { eq } from "drizzle-orm";
import { beforeAll, describe, expect, it } from "vitest";
import { action as invoiceAction } from "~/routes/billing/invoice";
import { action as newInvoiceAction } from "~/routes/billing/invoice-new";
import { createInvoice } from "~/models/billing/invoices.server";
import { action as typesAction } from "~/routes/settings/appointment-types";
import { action as feesAction } from "~/routes/settings/fees";
import { action as labsAction } from "~/routes/settings/labs";
import { invoiceLines, invoices, payments, practiceSettings } from "~/db/schema";
import { db } from "~/utils/db.server";
import { cookieFor, dataOf, makeRequest, run, statusOf, userByEmail } from "#tests/support/helpers";
import { fee, issuedInvoice, newPatient } from "./billing-support";

const NOT_DECIMAL = ["0x10", "1e1", "Infinity", " "];
let owner: string;
let reception: string;
beforeAll(async () => {
  owner = await cookieFor("owner");
  reception = await cookieFor("receptionist");
});

type Reply = { error: Record<string, string[]> };
const errorsOf = (res: unknown) => dataOf<Reply>(res).error;

describe("settings number fields", () => {
  it("the tax rate, the lab's overdue days and a visit type's minutes and recall months refuse what is not a decimal number", async () => {
    const [before] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
    for (const typed of NOT_DECIMAL) {
      const tax = await run(
        feesAction,
        makeRequest("/settings/fees", { cookie: owner, form: { intent: "tax", taxRate: typed } }),
      );
      expect(statusOf(tax)).toBe(400);
      expect(errorsOf(tax).taxRate?.[0]).toMatch(/Give a rate in per cent/);

      const lab = await run(
        labsAction,
        makeRequest("/settings/labs", { cookie: owner, form: { intent: "overdue", labOverdueDays: typed } }),
      );
      expect(statusOf(lab)).toBe(400);
      expect(dataOf<{ result: Reply }>(lab).result.error.labOverdueDays?.[0]).toMatch(/Give a number of days/);

      const type = await run(
        typesAction,
        makeRequest("/settings/appointment-types", {
          cookie: owner,
          form: {
            intent: "save",
            name: `Probe ${typed}`,
            durationMinutes: typed,
            recallMonths: typed === " " ? "" : typed,
            color: "#2563eb",
          },
        }),
      );
      expect(statusOf(type)).toBe(400);
      expect(errorsOf(type).durationMinutes?.[0]).toMatch(/Give the length in minutes/);
      if (typed.trim())
        expect(errorsOf(type).recallMonths?.[0]).toBe(
          `"${typed}" is not a plain decimal number. Give a number of months, or leave it empty.`,
        );
    }
    const [after] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
    expect(after).toMatchObject({ taxRateBp: before!.taxRateBp, labOverdueDays: before!.labOverdueDays });
  });
});

describe("billing number fields", () => {
  it("line quantities, a percentage discount and desk payments refuse hex, exponents, Infinity and blanks", async () => {
    const patient = await newPatient();
    const user = await userByEmail("reception@dioptra-demo.test");
    const f = await fee("NUM", 1000);
    const id = await createInvoice({
      patientId: patient.id,
      lines: [{ feeItemId: f.id, quantity: 1 }],
      actorUserId: user.id,
    });
    for (const typed of NOT_DECIMAL) {
      const line = await run(
        invoiceAction,
        makeRequest(`/billing/invoices/${id}`, {
          cookie: reception,
          form: { intent: "add-line", feeItemId: f.id, quantity: typed },
        }),
        { invoiceId: id },
      );
      expect(statusOf(line)).toBe(400);
      expect(errorsOf(line).quantity?.[0]).toMatch(/A whole number from 1 to 1000/);
      if (typed.trim()) {
        const discount = await run(
          invoiceAction,
          makeRequest(`/billing/invoices/${id}`, {
            cookie: reception,
            form: { intent: "discount", discountKind: "percent", discountValue: typed },
          }),
          { invoiceId: id },
        );
        expect(statusOf(discount)).toBe(400);
        expect(errorsOf(discount).discountValue?.[0]).toMatch(/Give a percentage from 0 to 100/);
      }
    }
    const lines = await db.select().from(invoiceLines).where(eq(invoiceLines.invoiceId, id));
    expect(lines.map((l) => l.quantity)).toEqual([1]);
    const [inv] = await db.select().from(invoices).where(eq(invoices.id, id));
    expect(inv).toMatchObject({ discountMinor: 0, subtotalMinor: 1000 });

    const issued = await issuedInvoice([{ priceMinor: 5000 }]);
    for (const typed of NOT_DECIMAL) {
      const pay = await run(
        invoiceAction,
        makeRequest(`/billing/invoices/${issued.id}`, {
          cookie: reception,
          form: { intent: "pay-desk", method: "cash", amount: typed },
        }),
        { invoiceId: issued.id },
      );
      expect(statusOf(pay)).toBe(400);
      expect(errorsOf(pay).amount?.[0]).toMatch(/Give an amount/);
    }
    expect(await db.select().from(payments).where(eq(payments.invoiceId, issued.id))).toEqual([]);
  });

  it("a new invoice refuses a fee's quantity or an extra line's quantity written in hex or with an exponent", async () => {
    const patient = await newPatient();
    const f = await fee("NEW", 1200);
    const before = await db.select({ id: invoices.id }).from(invoices).where(eq(invoices.patientId, patient.id));
    for (const typed of ["0x2", "1e1", "Infinity"]) {
      const res = await run(
        newInvoiceAction,
        makeRequest("/billing/invoices/new", {
          cookie: reception,
          form: {
            patientId: patient.id,
            [`qty_${f.id}`]: typed,
            customDescription: "Lens cloth",
            customPrice: "3.00",
            customQty: typed.length <= 4 ? typed : "1e1",
          },
        }),
      );
      expect(statusOf(res)).toBe(400);
      const errors = dataOf<{ errors: Record<string, string[]> }>(res).errors;
      expect(errors[`qty_${f.id}`]?.[0]).toMatch(/A whole number from 0 to 1000/);
      expect(errors.customQty?.[0]).toMatch(/A whole number from 1 to 1000/);
    }
    expect(await db.select({ id: invoices.id }).from(invoices).where(eq(invoices.patientId, patient.id))).toEqual(
      before,
    );
  });
});
