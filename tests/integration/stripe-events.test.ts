/**
 * Stripe as documented, through the stand-in: the Checkout Session the app opens (cards only, an
 * expiry with a margin over Stripe's 30-minute minimum, the pinned API version on every request),
 * events in the documented shape, and webhooks applied correctly whatever order they arrive in —
 * including the events of a payment method that settles later.
 */
import { eq } from "drizzle-orm";
import Stripe from "stripe";
import { describe, expect, it } from "vitest";
import { invoices, payments } from "~/db/schema";
import { action as webhookAction } from "~/routes/api/webhooks/stripe";
import { CHECKOUT_LIFETIME_SECONDS, signPayLink } from "~/models/billing/checkout.server";
import { action as payAction } from "~/routes/pay/pay";
import { db } from "~/utils/db.server";
import { STRIPE_API_VERSION, stripe } from "~/utils/payments.server";
import { makeRequest, run } from "#tests/support/helpers";
import { issuedInvoice, STANDIN } from "./billing-support";

const SECRET = "whsec_dioptra_local_standin";
const signer = new Stripe("sk_test_dioptra_local_standin");
type StandInEvent = { id: string; type: string; created: number; payload: string };

async function openCheckout(invoiceId: string) {
  const token = signPayLink(invoiceId);
  const res = (await run(payAction, makeRequest(`/pay/${token}`, { form: { intent: "pay" } }), { token })) as Response;
  expect(res.status).toBe(302);
  return res.headers.get("location")!.split("/").pop()!;
}
async function payOnStandIn(sessionId: string, body: Record<string, unknown>) {
  return (await (
    await fetch(`${STANDIN()}/_standin/sessions/${sessionId}/pay`, { method: "POST", body: JSON.stringify(body) })
  ).json()) as { ok: boolean; events: string[]; message?: string };
}
async function standInEvents(ids: string[]): Promise<StandInEvent[]> {
  const all = (await (await fetch(`${STANDIN()}/_standin/events`)).json()) as StandInEvent[];
  return ids.map((id) => all.find((e) => e.id === id)!);
}
async function deliver(ev: StandInEvent) {
  const header = signer.webhooks.generateTestHeaderString({ payload: ev.payload, secret: SECRET });
  const res = (await run(
    webhookAction,
    new Request("http://127.0.0.1:3000/api/webhooks/stripe", {
      method: "POST",
      headers: { "content-type": "application/json", "stripe-signature": header },
      body: ev.payload,
    }),
  )) as Response;
  expect(res.status).toBe(200);
  return ((await res.json()) as { outcome: string }).outcome;
}
const byType = (evs: StandInEvent[], type: string) => evs.find((e) => e.type === type)!;
const paymentOf = async (invoiceId: string) =>
  (await db.select().from(payments).where(eq(payments.invoiceId, invoiceId)))[0]!;
const invoiceOf = async (invoiceId: string) => (await db.select().from(invoices).where(eq(invoices.id, invoiceId)))[0]!;

describe("the Checkout Session the app opens", () => {
  it("offers cards only, expires with a margin over 30 minutes, and names the pinned API version", async () => {
    const { id } = await issuedInvoice([{ priceMinor: 4200 }]);
    const before = Math.floor(Date.now() / 1000);
    const sessionId = await openCheckout(id);
    const session = await stripe().checkout.sessions.retrieve(sessionId);
    expect(session.allowed_payment_method_types).toEqual(["card"]);
    expect(session.payment_method_types).toEqual(["card"]);
    // Stripe: expires_at must be at least 30 minutes after creation; the app asks for more.
    expect(CHECKOUT_LIFETIME_SECONDS).toBeGreaterThanOrEqual(40 * 60);
    expect(session.expires_at - before).toBeGreaterThanOrEqual(CHECKOUT_LIFETIME_SECONDS - 5);
    const health = (await (await fetch(`${STANDIN()}/_standin/health`)).json()) as {
      apiVersion: string;
      requests: { path: string; version: string | null }[];
    };
    const creates = health.requests.filter((r) => r.path === "/v1/checkout/sessions");
    expect(creates.length).toBeGreaterThan(0);
    expect(new Set(creates.map((r) => r.version))).toEqual(new Set([STRIPE_API_VERSION]));
    expect(health.apiVersion).toBe(STRIPE_API_VERSION);
    // A card-only session cannot be paid by bank debit.
    const debit = await payOnStandIn(sessionId, { sepaDebit: "succeeds" });
    expect(debit).toMatchObject({ ok: false, message: "This checkout accepts only card." });
  });

  it("sends events in Stripe's documented shape, which the SDK verifies and reads", async () => {
    const { id } = await issuedInvoice([{ priceMinor: 4300 }]);
    const sessionId = await openCheckout(id);
    const paid = await payOnStandIn(sessionId, { card: "4242424242424242" });
    const evs = await standInEvents(paid.events);
    expect(evs.map((e) => e.type)).toEqual(["payment_intent.succeeded", "checkout.session.completed"]);
    const completed = byType(evs, "checkout.session.completed");
    const header = signer.webhooks.generateTestHeaderString({ payload: completed.payload, secret: SECRET });
    const event = signer.webhooks.constructEvent(completed.payload, header, SECRET);
    // Stripe API reference, "The Event object": these fields, data.object the session itself.
    expect(Object.keys(event).sort()).toEqual([
      "api_version",
      "created",
      "data",
      "id",
      "livemode",
      "object",
      "pending_webhooks",
      "request",
      "type",
    ]);
    expect(event).toMatchObject({
      object: "event",
      api_version: STRIPE_API_VERSION,
      livemode: false,
      request: { id: null, idempotency_key: null },
    });
    const s = event.data.object as Stripe.Checkout.Session;
    expect(s).toMatchObject({
      object: "checkout.session",
      id: sessionId,
      mode: "payment",
      status: "complete",
      payment_status: "paid",
      amount_total: 4300,
      currency: "gbp",
      payment_method_types: ["card"],
      url: null,
    });
    expect(s.payment_intent).toMatch(/^pi_test_/);
    expect(s.customer_details).toMatchObject({ email: expect.any(String) });
    // The stand-in's own bookkeeping does not leak into the API's objects.
    expect(Object.keys(s)).not.toEqual(expect.arrayContaining(["display_items"]));
    expect(s).not.toHaveProperty("payment_intent_data");
    const pi = JSON.parse(byType(evs, "payment_intent.succeeded").payload).data.object as Stripe.PaymentIntent;
    expect(pi).toMatchObject({ object: "payment_intent", status: "succeeded", amount_received: 4300 });
    expect(pi).not.toHaveProperty("refunded");
  });
});

describe("events in any order", () => {
  it("a card payment: completion before the intent, a late decline of an earlier attempt and a replay change nothing twice", async () => {
    const { id } = await issuedInvoice([{ priceMinor: 5100 }]);
    const sessionId = await openCheckout(id);
    const declined = await standInEvents((await payOnStandIn(sessionId, { card: "4000000000000002" })).events);
    const paid = await standInEvents((await payOnStandIn(sessionId, { card: "4242424242424242" })).events);
    // Newest first: the completion, then the intent's success, then the older decline.
    expect(await deliver(byType(paid, "checkout.session.completed"))).toBe("payment succeeded");
    expect(await deliver(byType(paid, "payment_intent.succeeded"))).toMatch(/^ignored/);
    expect(await deliver(byType(declined, "payment_intent.payment_failed"))).toMatch(
      /^ignored: payment already succeeded/,
    );
    expect(await deliver(byType(paid, "checkout.session.completed"))).toMatch(/^duplicate/);
    expect(await paymentOf(id)).toMatchObject({ status: "succeeded", amountMinor: 5100 });
    expect(await invoiceOf(id)).toMatchObject({ status: "paid", paidMinor: 5100 });
  });

  /** A pending payment whose checkout also allows a bank debit (the app itself offers cards only). */
  async function debitCheckout(priceMinor: number) {
    const inv = await issuedInvoice([{ priceMinor }]);
    await openCheckout(inv.id);
    const p = await paymentOf(inv.id);
    const metadata = { invoice_id: inv.id, payment_id: p.id };
    const session = await stripe().checkout.sessions.create({
      mode: "payment",
      allowed_payment_method_types: ["card", "sepa_debit"],
      line_items: [
        { quantity: 1, price_data: { currency: "gbp", unit_amount: priceMinor, product_data: { name: "Invoice" } } },
      ],
      metadata,
      payment_intent_data: { metadata },
      success_url: "http://127.0.0.1:3000/done",
      cancel_url: "http://127.0.0.1:3000/cancelled",
    });
    await db.update(payments).set({ stripeCheckoutSessionId: session.id }).where(eq(payments.id, p.id));
    return { invoiceId: inv.id, sessionId: session.id };
  }

  it("a debit that settles later: completed unpaid keeps it pending; async_payment_succeeded records it, before or after", async () => {
    // In order.
    const a = await debitCheckout(6100);
    const evA = await standInEvents((await payOnStandIn(a.sessionId, { sepaDebit: "succeeds" })).events);
    expect(evA.map((e) => e.type)).toEqual([
      "checkout.session.completed",
      "payment_intent.succeeded",
      "checkout.session.async_payment_succeeded",
    ]);
    expect(JSON.parse(evA[0]!.payload).data.object.payment_status).toBe("unpaid");
    expect(await deliver(evA[0]!)).toMatch(/^awaiting settlement/);
    expect(await paymentOf(a.invoiceId)).toMatchObject({ status: "pending" });
    expect(await invoiceOf(a.invoiceId)).toMatchObject({ status: "open", paidMinor: 0 });
    expect(await deliver(evA[2]!)).toBe("payment succeeded");
    expect(await invoiceOf(a.invoiceId)).toMatchObject({ status: "paid", paidMinor: 6100 });

    // Reversed: the settlement arrives before the completion, which then changes nothing.
    const b = await debitCheckout(6200);
    const evB = await standInEvents((await payOnStandIn(b.sessionId, { sepaDebit: "succeeds" })).events);
    expect(await deliver(evB[2]!)).toBe("payment succeeded");
    expect(await deliver(evB[1]!)).toMatch(/^ignored/);
    expect(await deliver(evB[0]!)).toMatch(/^ignored: payment already succeeded/);
    expect(await paymentOf(b.invoiceId)).toMatchObject({ status: "succeeded", amountMinor: 6200 });
    expect(await invoiceOf(b.invoiceId)).toMatchObject({ status: "paid", paidMinor: 6200 });
  });

  it("a debit that fails later: async_payment_failed marks it failed, before or after the completion, and the invoice stays due", async () => {
    const a = await debitCheckout(6300);
    const evA = await standInEvents((await payOnStandIn(a.sessionId, { sepaDebit: "fails" })).events);
    expect(evA.map((e) => e.type)).toEqual([
      "checkout.session.completed",
      "payment_intent.payment_failed",
      "checkout.session.async_payment_failed",
    ]);
    expect(await deliver(evA[0]!)).toMatch(/^awaiting settlement/);
    expect(await deliver(evA[2]!)).toBe("payment failed after checkout");
    expect(await paymentOf(a.invoiceId)).toMatchObject({ status: "failed" });

    const b = await debitCheckout(6400);
    const evB = await standInEvents((await payOnStandIn(b.sessionId, { sepaDebit: "fails" })).events);
    expect(await deliver(evB[2]!)).toBe("payment failed after checkout");
    expect(await deliver(evB[0]!)).toMatch(/^ignored: payment already failed/);
    expect(await deliver(evB[1]!)).toMatch(/^ignored/);
    expect(await paymentOf(b.invoiceId)).toMatchObject({ status: "failed" });
    expect(await invoiceOf(b.invoiceId)).toMatchObject({ status: "open", paidMinor: 0 });
  });
});

describe("the stand-in delivers in any order", () => {
  it("delivers the events it made in the order asked", async () => {
    const { id } = await issuedInvoice([{ priceMinor: 4400 }]);
    const sessionId = await openCheckout(id);
    const paid = await payOnStandIn(sessionId, { card: "4242424242424242" });
    const reversed = [...paid.events].reverse();
    const res = await fetch(`${STANDIN()}/_standin/events/deliver`, {
      method: "POST",
      body: JSON.stringify({ ids: reversed }),
    });
    expect(res.status).toBe(200);
    const out = (await res.json()) as { id: string; type: string }[];
    expect(out.map((e) => e.id)).toEqual(reversed);
    expect(out.map((e) => e.type)).toEqual(["checkout.session.completed", "payment_intent.succeeded"]);
    expect(
      (
        await fetch(`${STANDIN()}/_standin/events/deliver`, {
          method: "POST",
          body: JSON.stringify({ ids: ["evt_nope"] }),
        })
      ).status,
    ).toBe(404);
  });
});
