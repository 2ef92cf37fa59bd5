/**
 * Stripe webhooks against the real stand-in: checkouts are opened through the app's own code
 * (the Stripe SDK over HTTP), paid on the stand-in, and the events it made are posted to the
 * webhook action signed as Stripe signs them.
 */
import { and, eq } from "drizzle-orm";
import Stripe from "stripe";
import { describe, expect, it } from "vitest";
import { action as webhookAction } from "~/routes/api/webhooks/stripe";
import { action as payAction, loader as payLoader } from "~/routes/pay/pay";
import { signPayLink } from "~/models/billing/checkout.server";
import { refundPayment } from "~/models/billing/invoices.server";
import { invoices, payments, stripeEvents } from "~/db/schema";
import { db } from "~/utils/db.server";
import { dataOf, mailTo, makeRequest, run, statusOf } from "#tests/support/helpers";
import { issuedInvoice, STANDIN } from "./billing-support";

const SECRET = "whsec_dioptra_local_standin";
const signer = new Stripe("sk_test_dioptra_local_standin");
const CARD_OK = "4242 4242 4242 4242";
const CARD_DECLINED = "4000 0000 0000 0002";

type StandInEvent = { id: string; type: string; payload: string };

async function openCheckout(invoiceId: string) {
  const token = signPayLink(invoiceId);
  const res = (await run(payAction, makeRequest(`/pay/${token}`, { form: { intent: "pay" } }), { token })) as Response;
  expect(res.status).toBe(302);
  const url = res.headers.get("location")!;
  expect(url).toMatch(new RegExp(`^${STANDIN()}/checkout/cs_test_`));
  return { token, url, sessionId: url.split("/").pop()! };
}

async function payOnStandIn(sessionId: string, body: Record<string, unknown>) {
  const res = await fetch(`${STANDIN()}/_standin/sessions/${sessionId}/pay`, {
    method: "POST",
    body: JSON.stringify(body),
  });
  return (await res.json()) as { ok: boolean; events: string[]; message?: string };
}

async function standInEvent(id: string): Promise<StandInEvent> {
  const list = (await (await fetch(`${STANDIN()}/_standin/events`)).json()) as StandInEvent[];
  const ev = list.find((e) => e.id === id);
  if (!ev) throw new Error(`stand-in has no event ${id}`);
  return ev;
}

function deliver(payload: string, header = signer.webhooks.generateTestHeaderString({ payload, secret: SECRET })) {
  return run(
    webhookAction,
    new Request("http://127.0.0.1:3000/api/webhooks/stripe", {
      method: "POST",
      headers: { "content-type": "application/json", "stripe-signature": header },
      body: payload,
    }),
  );
}
const outcome = async (res: unknown) => ((await (res as Response).json()) as { outcome: string }).outcome;

async function eventOfType(ids: string[], type: string) {
  for (const id of ids) {
    const ev = await standInEvent(id);
    if (ev.type === type) return ev;
  }
  throw new Error(`no ${type} among ${ids.join(", ")}`);
}

describe("paying online", () => {
  it("marks the invoice paid only when the signed checkout.session.completed arrives, once, and e-mails the receipt", async () => {
    const { id, patient } = await issuedInvoice([{ priceMinor: 6500 }]);
    const { sessionId } = await openCheckout(id);
    const paid = await payOnStandIn(sessionId, { card: CARD_OK });
    expect(paid.ok).toBe(true);
    // Paid at Stripe, but no webhook yet: the app has not marked anything.
    let [inv] = await db.select().from(invoices).where(eq(invoices.id, id));
    expect(inv).toMatchObject({ status: "open", paidMinor: 0 });

    const completed = await eventOfType(paid.events, "checkout.session.completed");
    const res = await deliver(completed.payload);
    expect(statusOf(res)).toBe(200);
    expect(await outcome(res)).toBe("payment succeeded");
    [inv] = await db.select().from(invoices).where(eq(invoices.id, id));
    expect(inv).toMatchObject({ status: "paid", paidMinor: 6500 });
    const [p] = await db.select().from(payments).where(eq(payments.invoiceId, id));
    expect(p).toMatchObject({ status: "succeeded", method: "card_online", amountMinor: 6500 });
    expect(p!.stripePaymentIntentId).toMatch(/^pi_test_/);
    expect((await mailTo(patient.email!)).filter((m) => m.subject.startsWith("Receipt"))).toHaveLength(1);

    // Delivered again (and five more times at once): nothing changes, no second receipt.
    const again = await deliver(completed.payload);
    expect(await outcome(again)).toBe("duplicate: already processed");
    const burst = await Promise.all(Array.from({ length: 5 }, () => deliver(completed.payload)));
    for (const b of burst) expect(await outcome(b)).toBe("duplicate: already processed");
    [inv] = await db.select().from(invoices).where(eq(invoices.id, id));
    expect(inv!.paidMinor).toBe(6500);
    expect(
      await db
        .select()
        .from(stripeEvents)
        .where(eq(stripeEvents.id, JSON.parse(completed.payload).id)),
    ).toHaveLength(1);
    expect((await mailTo(patient.email!)).filter((m) => m.subject.startsWith("Receipt"))).toHaveLength(1);

    // The stand-in's own replay (what "resend" in a dashboard does) is refused the same way.
    const replay = await fetch(`${STANDIN()}/_standin/events/${completed.id}/deliver`, { method: "POST" });
    expect(replay.status).toBe(200);
  });

  it("applies five concurrent first deliveries of one event exactly once", async () => {
    const { id } = await issuedInvoice([{ priceMinor: 2500 }]);
    const { sessionId } = await openCheckout(id);
    const paid = await payOnStandIn(sessionId, { card: CARD_OK });
    const completed = await eventOfType(paid.events, "checkout.session.completed");
    const results = await Promise.all(Array.from({ length: 5 }, () => deliver(completed.payload).then(outcome)));
    expect(results.filter((o) => o === "payment succeeded")).toHaveLength(1);
    expect(results.filter((o) => o.startsWith("duplicate"))).toHaveLength(4);
    const [inv] = await db.select().from(invoices).where(eq(invoices.id, id));
    expect(inv).toMatchObject({ status: "paid", paidMinor: 2500 });
  });

  it("never lets an older failure event undo a success delivered before it", async () => {
    const { id } = await issuedInvoice([{ priceMinor: 4200 }]);
    const { sessionId, token } = await openCheckout(id);
    const declined = await payOnStandIn(sessionId, { card: CARD_DECLINED });
    expect(declined.ok).toBe(false);
    const paid = await payOnStandIn(sessionId, { card: CARD_OK });
    const failedEv = await standInEvent(declined.events[0]!);
    const completed = await eventOfType(paid.events, "checkout.session.completed");
    // Out of order: the success first, the (earlier) decline afterwards.
    expect(await outcome(await deliver(completed.payload))).toBe("payment succeeded");
    expect(await outcome(await deliver(failedEv.payload))).toBe("ignored: payment already succeeded");
    const [p] = await db.select().from(payments).where(eq(payments.invoiceId, id));
    expect(p).toMatchObject({ status: "succeeded", problem: null });
    const page = dataOf<{ invoice: { status: string } }>(
      await run(payLoader, makeRequest(`/pay/${token}?checkout=done`), { token }),
    );
    expect(page.invoice.status).toBe("paid");
  });

  it("keeps the invoice open with the decline message after a declined card", async () => {
    const { id } = await issuedInvoice([{ priceMinor: 3000 }]);
    const { sessionId, token } = await openCheckout(id);
    const declined = await payOnStandIn(sessionId, { card: CARD_DECLINED });
    expect(declined.message).toBe("Your card was declined.");
    expect(await outcome(await deliver((await standInEvent(declined.events[0]!)).payload))).toBe(
      "attempt failed: Your card was declined.",
    );
    const [inv] = await db.select().from(invoices).where(eq(invoices.id, id));
    expect(inv).toMatchObject({ status: "open", paidMinor: 0 });
    const page = dataOf<{ attempt: { status: string; problem: string } }>(
      await run(payLoader, makeRequest(`/pay/${token}?checkout=cancelled`), { token }),
    );
    expect(page.attempt).toEqual({ status: "pending", problem: "Your card was declined." });
  });

  it("flags a payment for the wrong amount instead of accepting it", async () => {
    const { id } = await issuedInvoice([{ priceMinor: 9900 }]);
    const { sessionId, token } = await openCheckout(id);
    const paid = await payOnStandIn(sessionId, { card: CARD_OK, amountTotal: 9800 });
    const completed = await eventOfType(paid.events, "checkout.session.completed");
    expect(await outcome(await deliver(completed.payload))).toMatch(
      /^flagged: Stripe reports £98.00 paid, but this checkout was for £99.00/,
    );
    const [inv] = await db.select().from(invoices).where(eq(invoices.id, id));
    expect(inv).toMatchObject({ status: "open", paidMinor: 0 });
    const [p] = await db.select().from(payments).where(eq(payments.invoiceId, id));
    expect(p!.status).toBe("flagged");
    expect(p!.problem).toContain("Not accepted");
    // The patient coming back is told it is being checked, and the invoice still shows the amount due.
    const page = dataOf<{ attempt: { status: string }; invoice: { due: string } }>(
      await run(payLoader, makeRequest(`/pay/${token}?checkout=done`), { token }),
    );
    expect(page.attempt.status).toBe("flagged");
    expect(page.invoice.due).toBe("£99.00");
  });

  it("refuses a bad signature with 400 and changes nothing", async () => {
    const { id } = await issuedInvoice([{ priceMinor: 1500 }]);
    const { sessionId } = await openCheckout(id);
    const paid = await payOnStandIn(sessionId, { card: CARD_OK });
    const completed = await eventOfType(paid.events, "checkout.session.completed");
    const forged = signer.webhooks.generateTestHeaderString({
      payload: completed.payload,
      secret: "whsec_someone_else",
    });
    const cases = [
      deliver(completed.payload, forged),
      deliver(completed.payload, "t=1,v1=deadbeef"),
      deliver(
        completed.payload.replace('"amount_total": 1500', '"amount_total": 1'),
        signer.webhooks.generateTestHeaderString({ payload: completed.payload, secret: SECRET }),
      ),
      run(
        webhookAction,
        new Request("http://127.0.0.1:3000/api/webhooks/stripe", { method: "POST", body: completed.payload }),
      ),
    ];
    for (const res of await Promise.all(cases)) expect(statusOf(res)).toBe(400);
    expect(
      await db
        .select()
        .from(stripeEvents)
        .where(eq(stripeEvents.id, JSON.parse(completed.payload).id)),
    ).toHaveLength(0);
    const [inv] = await db.select().from(invoices).where(eq(invoices.id, id));
    expect(inv).toMatchObject({ status: "open", paidMinor: 0 });
    // A stale but correctly signed event (older than the SDK's 5-minute tolerance) is refused too.
    const old = signer.webhooks.generateTestHeaderString({
      payload: completed.payload,
      secret: SECRET,
      timestamp: Math.floor(Date.now() / 1000) - 3600,
    });
    expect(statusOf(await deliver(completed.payload, old))).toBe(400);
  });

  it("refunds an online payment through Stripe, in part", async () => {
    const { id, reception } = await issuedInvoice([{ priceMinor: 8000 }]);
    const { sessionId } = await openCheckout(id);
    const paid = await payOnStandIn(sessionId, { card: CARD_OK });
    await deliver((await eventOfType(paid.events, "checkout.session.completed")).payload);
    const [p] = await db
      .select()
      .from(payments)
      .where(and(eq(payments.invoiceId, id), eq(payments.status, "succeeded")));
    const { refundId } = await refundPayment({
      paymentId: p!.id,
      amountMinor: 3000,
      reason: "Lens not needed",
      actorUserId: reception.id,
    });
    expect(refundId).toBeTruthy();
    const [after] = await db.select().from(payments).where(eq(payments.id, p!.id));
    expect(after!.refundedMinor).toBe(3000);
    const [inv] = await db.select().from(invoices).where(eq(invoices.id, id));
    expect(inv).toMatchObject({ status: "partially_paid", paidMinor: 5000 });
    // The stand-in, like Stripe, refuses more than what is left.
    await expect(
      refundPayment({ paymentId: p!.id, amountMinor: 6000, reason: "too much", actorUserId: reception.id }),
    ).rejects.toThrow(/At most £50.00/);
  });
});
