/** Invoices, receipts and their e-mails carry the site that issued them, not only the practice. */
import { eq } from "drizzle-orm";
import { beforeAll, describe, expect, it } from "vitest";
import { billingPdf, emailInvoice, emailReceipt } from "~/models/billing/documents.server";
import { createInvoice, invoiceDetail, issueInvoice, recordDeskPayment } from "~/models/billing/invoices.server";
import { appointments, invoices, sites } from "~/db/schema";
import { db } from "~/utils/db.server";
import { mailTo, userByEmail } from "#tests/support/helpers";
import { pdfPages, savePdf } from "#tests/support/pdf";
import { fee, finishedExam, newPatient } from "./billing-support";

let main: typeof sites.$inferSelect;
let hill: typeof sites.$inferSelect;
beforeAll(async () => {
  main = (await db.select().from(sites).where(eq(sites.isDefault, true)))[0]!;
  hill = (await db.select().from(sites).where(eq(sites.name, "Hillcrest Parade")))[0]!;
});

async function pdfText(bytes: Uint8Array) {
  return pdfPages(savePdf(bytes)).join("\n").replace(/\s+/g, " ");
}

describe("the site on invoices and receipts", () => {
  it("an exam's invoice is the site of its visit: the PDFs and e-mails print that site's name, address and phone", async () => {
    const patient = await newPatient();
    const reception = await userByEmail("reception@dioptra-demo.test");
    const f = await fee("SITE", 6000);
    const exam = await finishedExam(patient.id, f.id);
    await db.update(appointments).set({ siteId: hill.id }).where(eq(appointments.id, exam.appointmentId!));
    const id = await createInvoice({
      patientId: patient.id,
      examId: exam.id,
      lines: [{ feeItemId: f.id, quantity: 1 }],
      actorUserId: reception.id,
    });
    expect((await db.select({ siteId: invoices.siteId }).from(invoices).where(eq(invoices.id, id)))[0]!.siteId).toBe(
      hill.id,
    );
    await issueInvoice(id, reception.id);
    const { paymentId } = await recordDeskPayment({
      invoiceId: id,
      method: "cash",
      amountMinor: 2000,
      reference: "",
      actorUserId: reception.id,
    });
    const d = (await invoiceDetail(id))!;

    for (const text of [
      await pdfText(await billingPdf(d, "invoice")),
      await pdfText(await billingPdf(d, "receipt", paymentId)),
    ]) {
      expect(text).toContain("Larkspur Lane Eye Care");
      expect(text).toContain("Hillcrest Parade");
      expect(text).toContain("3 Hillcrest Parade, Brackenford BF6 2HP");
      expect(text).toContain("01632 960 733");
      // Not the main site's (the practice's) address or phone.
      expect(text).not.toContain(main.addressLine1);
      expect(text).not.toContain("01632 960 418");
    }

    await emailInvoice(id, reception.id);
    await emailReceipt(paymentId, reception.id);
    const mails = await mailTo(patient.email!);
    expect(mails.map((m) => m.subject).sort()).toEqual(
      [expect.stringMatching(/^Invoice INV-/), expect.stringMatching(/^Receipt for your payment/)].sort(),
    );
    for (const m of mails) {
      expect(m.text).toContain("Larkspur Lane Eye Care · Hillcrest Parade");
      expect(m.text).toContain("3 Hillcrest Parade, Brackenford, BF6 2HP");
      expect(m.text).toContain("01632 960 733");
    }
  });

  it("an invoice without an exam is the default site's", async () => {
    const patient = await newPatient();
    const reception = await userByEmail("reception@dioptra-demo.test");
    const f = await fee("MAIN", 1500);
    const id = await createInvoice({
      patientId: patient.id,
      lines: [{ feeItemId: f.id, quantity: 1 }],
      actorUserId: reception.id,
    });
    const d = (await invoiceDetail(id))!;
    expect(d.invoice.siteId).toBe(main.id);
    const text = await pdfText(await billingPdf(d, "invoice"));
    expect(text).toContain(main.name);
    expect(text).toContain(main.addressLine1);
    expect(text).not.toContain("Hillcrest");
  });
});
