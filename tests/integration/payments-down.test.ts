import { eq } from "drizzle-orm";
import { describe, expect, it, vi } from "vitest";

// This file's app modules talk to a port where nothing listens: the payment service is down.
vi.hoisted(() => {
  process.env.STRIPE_API_PORT = "9";
});

const { action: payAction } = await import("~/routes/pay/pay");
const { signPayLink } = await import("~/models/billing/checkout.server");
const { payments, invoices } = await import("~/db/schema");
const { db } = await import("~/utils/db.server");
const { dataOf, makeRequest, run, statusOf } = await import("#tests/support/helpers");
const { issuedInvoice } = await import("./billing-support");

describe("when Stripe cannot be reached", () => {
  it("tells the patient clearly and leaves no half-made payment", async () => {
    const { id } = await issuedInvoice([{ priceMinor: 6500 }]);
    const token = signPayLink(id);
    const res = await run(payAction, makeRequest(`/pay/${token}`, { form: { intent: "pay" } }), { token });
    expect(statusOf(res)).toBe(503);
    expect(dataOf<{ error: string }>(res).error).toMatch(
      /Card payments are not available right now.*Nothing has been charged/,
    );
    expect(await db.select().from(payments).where(eq(payments.invoiceId, id))).toHaveLength(0);
    const [inv] = await db.select().from(invoices).where(eq(invoices.id, id));
    expect(inv).toMatchObject({ status: "open", paidMinor: 0 });
  });
});
