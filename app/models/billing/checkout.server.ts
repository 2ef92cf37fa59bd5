/**
 * Online card payments through Stripe Checkout, and the signed pay-by-link tokens.
 *
 * Only Stripe's signed webhooks mark an online payment as succeeded. Each event is applied once:
 * its id goes into stripe_events in the same transaction as its effect, so a second delivery
 * finds the row and changes nothing. Events can arrive in any order: a payment that has
 * succeeded is never moved back by an older or later failure/expiry event.
 *
 * Checkout offers cards only, which settle at once: `checkout.session.completed` then says
 * `payment_status: "paid"`. Methods that settle days later (bank debits, vouchers) are not
 * offered: the patient leaves with their glasses, and a debit that fails afterwards would turn a
 * paid invoice back into a debt. Should a session ever complete unpaid, the payment stays
 * pending and `checkout.session.async_payment_succeeded` / `_failed` settle it.
 */
import { createHmac, timingSafeEqual } from "node:crypto";
import { and, eq, sql } from "drizzle-orm";
import { invoices, patients, payments, stripeEvents } from "~/db/schema";
import { formatMoney } from "~/lib/format";
import { audit } from "~/utils/audit.server";
import { db, type Tx } from "~/utils/db.server";
import { env } from "~/utils/env.server";
import { absoluteUrl } from "~/utils/mail.server";
import { isStripeUnreachable, Stripe, stripe } from "~/utils/payments.server";
import { applyPaid, BillingError, closePendingCheckout, invoiceLabel } from "./invoices.server";

// ---------------------------------------------------------------- pay-by-link tokens

export const PAY_LINK_TTL_MS = 14 * 24 * 60 * 60 * 1000;
/** A Checkout Session's lifetime: a margin over Stripe's 30-minute minimum. */
export const CHECKOUT_LIFETIME_SECONDS = 45 * 60;

function payLinkKey(secret: string) {
  return createHmac("sha256", secret).update("dioptra pay-by-link v1").digest();
}
function payLinkSignature(secret: string, invoiceId: string, expires: number) {
  return createHmac("sha256", payLinkKey(secret)).update(`${invoiceId}.${expires}`).digest("base64url");
}

/** `<invoiceId>.<expiry, seconds>.<HMAC>`: reveals one invoice until it expires. */
export function signPayLink(invoiceId: string, now = Date.now(), ttlMs = PAY_LINK_TTL_MS) {
  const expires = Math.floor((now + ttlMs) / 1000);
  const secret = env.SESSION_SECRET.split(",")[0]!;
  return `${invoiceId}.${expires}.${payLinkSignature(secret, invoiceId, expires)}`;
}

export type PayLinkCheck =
  { ok: true; invoiceId: string; expiresAt: Date } | { ok: false; reason: "invalid" | "expired" };

/** Checks a pay-link token in constant time against every current secret (rotation). */
export function verifyPayLink(token: string, now = Date.now()): PayLinkCheck {
  // One spelling only: a lower-case uuid, the expiry without leading zeros, the signature's
  // exact base64url text.
  const m =
    /^([0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12})\.([1-9]\d{0,11})\.([A-Za-z0-9_-]{43})$/.exec(
      token,
    );
  if (!m) return { ok: false, reason: "invalid" };
  const [, invoiceId, exp, sig] = m;
  // Compared as text, not decoded bytes: base64url's last character carries spare bits, and a
  // link must not stay valid when any character of it is changed.
  const given = Buffer.from(sig!, "utf8");
  const valid = env.SESSION_SECRET.split(",").some((secret) => {
    const want = Buffer.from(payLinkSignature(secret, invoiceId!, Number(exp)), "utf8");
    return want.length === given.length && timingSafeEqual(want, given);
  });
  if (!valid) return { ok: false, reason: "invalid" };
  if (Number(exp) * 1000 < now) return { ok: false, reason: "expired" };
  return { ok: true, invoiceId: invoiceId!, expiresAt: new Date(Number(exp) * 1000) };
}

export const payLinkUrl = (token: string) => absoluteUrl(`/pay/${token}`);

// ---------------------------------------------------------------- starting a checkout

/**
 * The Checkout page address for the amount now due. The invoice row is locked for the whole
 * call, and at most one pending online payment exists per invoice (a partial unique index), so
 * concurrent clicks get the same checkout, never two charges. If Stripe cannot be reached the
 * transaction rolls back: no half-made payment is left behind.
 */
export async function startCheckout(invoiceId: string, returnPath: string): Promise<string> {
  try {
    return await db.transaction(async (tx) => {
      const [inv] = await tx
        .select({ invoice: invoices, email: patients.email })
        .from(invoices)
        .innerJoin(patients, eq(patients.id, invoices.patientId))
        .where(eq(invoices.id, invoiceId))
        .for("update", { of: invoices });
      if (!inv) throw new BillingError("There is no such invoice.", { status: 404 });
      const i = inv.invoice;
      if (i.status === "paid") throw new BillingError("This invoice is already paid. Thank you.", { status: 409 });
      if (i.status !== "open" && i.status !== "partially_paid")
        throw new BillingError("This invoice cannot be paid online. Please contact the practice.", { status: 409 });
      const due = i.totalMinor - i.paidMinor;
      const [pending] = await tx
        .select()
        .from(payments)
        .where(and(eq(payments.invoiceId, i.id), eq(payments.status, "pending"), eq(payments.method, "card_online")))
        .for("update");
      if (pending) {
        const fresh = pending.checkoutExpiresAt && pending.checkoutExpiresAt.getTime() > Date.now() + 5 * 60_000;
        if (pending.amountMinor === due && fresh && pending.checkoutUrl) return pending.checkoutUrl;
        await closePendingCheckout(tx, pending.id, "Replaced by a new checkout.");
      }
      const [p] = await tx
        .insert(payments)
        .values({ invoiceId: i.id, method: "card_online", status: "pending", amountMinor: due, currency: i.currency })
        .returning({ id: payments.id });
      const label = invoiceLabel(i.number);
      const back = absoluteUrl(returnPath);
      const sep = back.includes("?") ? "&" : "?";
      // Stripe refuses an expiry under 30 minutes from its own clock; 45 leaves room for clock
      // drift and a slow request, and still frees an abandoned checkout soon.
      const expiresAt = Math.floor(Date.now() / 1000) + CHECKOUT_LIFETIME_SECONDS;
      const metadata = { invoice_id: i.id, payment_id: p!.id, description: `invoice ${label}` };
      const session = await stripe().checkout.sessions.create(
        {
          mode: "payment",
          allowed_payment_method_types: ["card"],
          line_items: [
            {
              quantity: 1,
              price_data: {
                currency: i.currency.toLowerCase(),
                unit_amount: due,
                product_data: { name: `Invoice ${label}` },
              },
            },
          ],
          client_reference_id: p!.id,
          customer_email: inv.email ?? undefined,
          metadata,
          payment_intent_data: { metadata },
          success_url: `${back}${sep}checkout=done&session_id={CHECKOUT_SESSION_ID}`,
          cancel_url: `${back}${sep}checkout=cancelled`,
          expires_at: expiresAt,
        },
        { idempotencyKey: `checkout-${p!.id}` },
      );
      if (!session.url) throw new BillingError("Stripe did not return a checkout page.", { status: 502 });
      await tx
        .update(payments)
        .set({
          stripeCheckoutSessionId: session.id,
          checkoutUrl: session.url,
          checkoutExpiresAt: new Date((session.expires_at ?? expiresAt) * 1000),
        })
        .where(eq(payments.id, p!.id));
      await audit(
        {
          action: "billing.checkout_started",
          entityType: "payment",
          entityId: p!.id,
          patientId: i.patientId,
          detail: { invoiceId: i.id, amountMinor: due, session: session.id },
        },
        tx,
      );
      return session.url;
    });
  } catch (error) {
    if (error instanceof BillingError) throw error;
    if (isStripeUnreachable(error))
      throw new BillingError(
        "Card payments are not available right now: the payment service could not be reached. Nothing has been charged. Please try again in a few minutes, or pay at the practice.",
        { status: 503 },
      );
    if (error instanceof Stripe.errors.StripeError) {
      throw new BillingError(
        `The payment service refused to start the payment (${error.message}). Nothing has been charged.`,
        { status: 502 },
      );
    }
    throw error;
  }
}

// ---------------------------------------------------------------- webhooks

export type EventOutcome = { outcome: string; duplicate?: boolean; receiptPaymentId?: string };

async function paymentBySession(tx: Tx, sessionId: string) {
  const [p] = await tx.select().from(payments).where(eq(payments.stripeCheckoutSessionId, sessionId)).for("update");
  return p ?? null;
}
async function paymentById(tx: Tx, id: string | undefined) {
  if (!id || !/^[0-9a-f-]{36}$/.test(id)) return null;
  const [p] = await tx.select().from(payments).where(eq(payments.id, id)).for("update");
  return p ?? null;
}

async function onCheckoutCompleted(
  tx: Tx,
  event: Stripe.Event,
  s: Stripe.Checkout.Session,
): Promise<EventOutcome & { paymentId?: string }> {
  const p = (await paymentBySession(tx, s.id)) ?? (await paymentById(tx, s.metadata?.payment_id));
  if (!p) return { outcome: "ignored: no payment for this checkout session" };
  if (p.status === "succeeded" || p.status === "flagged")
    return { outcome: `ignored: payment already ${p.status}`, paymentId: p.id };
  if (s.payment_status !== "paid") {
    if (p.status !== "pending") return { outcome: `ignored: payment already ${p.status}`, paymentId: p.id };
    // A method that settles later: nothing is received until async_payment_succeeded.
    await tx
      .update(payments)
      .set({
        problem: "Payment started; the bank has not confirmed it yet.",
        lastEventCreated: event.created,
        updatedAt: new Date(),
      })
      .where(eq(payments.id, p.id));
    return {
      outcome: `awaiting settlement: checkout completed with payment_status ${s.payment_status}`,
      paymentId: p.id,
    };
  }
  const [inv] = await tx.select().from(invoices).where(eq(invoices.id, p.invoiceId)).for("update");
  if (!inv) return { outcome: "ignored: invoice missing", paymentId: p.id };
  const amount = s.amount_total ?? 0;
  const due = inv.totalMinor - inv.paidMinor;
  const intent = typeof s.payment_intent === "string" ? s.payment_intent : (s.payment_intent?.id ?? null);
  let problem: string | null = null;
  if ((s.currency ?? "").toUpperCase() !== p.currency.toUpperCase())
    problem = `Paid in ${String(s.currency).toUpperCase()}, but the invoice is in ${p.currency}.`;
  else if (s.metadata?.invoice_id && s.metadata.invoice_id !== inv.id)
    problem = "The checkout names a different invoice.";
  else if (amount !== p.amountMinor)
    problem = `Stripe reports ${formatMoney(amount, p.currency)} paid, but this checkout was for ${formatMoney(p.amountMinor, p.currency)}.`;
  else if (inv.status === "void") problem = "The invoice was voided before the payment arrived.";
  else if (amount > due)
    problem = `The payment of ${formatMoney(amount, p.currency)} is more than the ${formatMoney(due, p.currency)} still due (it may have been paid at the desk meanwhile).`;
  const base = {
    stripePaymentIntentId: intent,
    receivedAt: new Date(event.created * 1000),
    lastEventCreated: event.created,
    updatedAt: new Date(),
  };
  if (problem) {
    await tx
      .update(payments)
      .set({
        ...base,
        status: "flagged",
        amountMinor: amount > 0 ? amount : p.amountMinor,
        problem: `Not accepted: ${problem} Check it in Stripe and refund or reconcile by hand.`,
      })
      .where(eq(payments.id, p.id));
    await audit(
      {
        action: "billing.payment_flagged",
        entityType: "payment",
        entityId: p.id,
        patientId: inv.patientId,
        detail: { event: event.id, problem, amountMinor: amount },
      },
      tx,
    );
    return { outcome: `flagged: ${problem}`, paymentId: p.id };
  }
  await tx
    .update(payments)
    .set({ ...base, status: "succeeded", problem: null })
    .where(eq(payments.id, p.id));
  await applyPaid(tx, inv, amount);
  await audit(
    {
      action: "billing.payment_succeeded",
      entityType: "payment",
      entityId: p.id,
      patientId: inv.patientId,
      detail: { event: event.id, amountMinor: amount, invoiceId: inv.id },
    },
    tx,
  );
  return { outcome: "payment succeeded", paymentId: p.id, receiptPaymentId: p.id };
}

async function onPaymentFailed(
  tx: Tx,
  event: Stripe.Event,
  pi: Stripe.PaymentIntent,
): Promise<EventOutcome & { paymentId?: string }> {
  const p = await paymentById(tx, pi.metadata?.payment_id);
  if (!p) return { outcome: "ignored: no payment for this payment intent" };
  if (p.status !== "pending") return { outcome: `ignored: payment already ${p.status}`, paymentId: p.id };
  if (p.lastEventCreated && p.lastEventCreated > event.created)
    return { outcome: "ignored: older than the last event applied", paymentId: p.id };
  const message = pi.last_payment_error?.message ?? "The card payment did not go through.";
  // The checkout stays open (the patient may try another card); only the message is kept.
  await tx
    .update(payments)
    .set({ problem: message, lastEventCreated: event.created, updatedAt: new Date() })
    .where(eq(payments.id, p.id));
  return { outcome: `attempt failed: ${message}`, paymentId: p.id };
}

async function onAsyncPaymentFailed(
  tx: Tx,
  event: Stripe.Event,
  s: Stripe.Checkout.Session,
): Promise<EventOutcome & { paymentId?: string }> {
  const p = (await paymentBySession(tx, s.id)) ?? (await paymentById(tx, s.metadata?.payment_id));
  if (!p) return { outcome: "ignored: no payment for this checkout session" };
  if (p.status !== "pending") return { outcome: `ignored: payment already ${p.status}`, paymentId: p.id };
  await tx
    .update(payments)
    .set({
      status: "failed",
      problem: "The bank did not complete the payment.",
      lastEventCreated: event.created,
      updatedAt: new Date(),
    })
    .where(eq(payments.id, p.id));
  return { outcome: "payment failed after checkout", paymentId: p.id };
}

async function onCheckoutExpired(
  tx: Tx,
  event: Stripe.Event,
  s: Stripe.Checkout.Session,
): Promise<EventOutcome & { paymentId?: string }> {
  const p = await paymentBySession(tx, s.id);
  if (!p) return { outcome: "ignored: no payment for this checkout session" };
  if (p.status !== "pending") return { outcome: `ignored: payment already ${p.status}`, paymentId: p.id };
  await tx
    .update(payments)
    .set({
      status: "failed",
      problem: p.problem ?? "The checkout expired before a payment was made.",
      lastEventCreated: event.created,
      updatedAt: new Date(),
    })
    .where(eq(payments.id, p.id));
  return { outcome: "checkout expired", paymentId: p.id };
}

/** Applies one verified event exactly once. Throws only on a fault, so Stripe retries it. */
export async function processStripeEvent(event: Stripe.Event): Promise<EventOutcome> {
  return db.transaction(async (tx) => {
    const inserted = await tx
      .insert(stripeEvents)
      .values({
        id: event.id,
        type: event.type,
        created: event.created,
        outcome: "processing",
        payload: event as unknown as Record<string, unknown>,
      })
      .onConflictDoNothing({ target: stripeEvents.id })
      .returning({ id: stripeEvents.id });
    if (!inserted.length) return { outcome: "duplicate: already processed", duplicate: true };
    let result: EventOutcome & { paymentId?: string };
    switch (event.type) {
      case "checkout.session.completed":
      case "checkout.session.async_payment_succeeded":
        result = await onCheckoutCompleted(tx, event, event.data.object);
        break;
      case "checkout.session.async_payment_failed":
        result = await onAsyncPaymentFailed(tx, event, event.data.object);
        break;
      case "checkout.session.expired":
        result = await onCheckoutExpired(tx, event, event.data.object);
        break;
      case "payment_intent.payment_failed":
        result = await onPaymentFailed(tx, event, event.data.object);
        break;
      default:
        // payment_intent.succeeded, refund.created, …: checkout.session.completed (and the desk's
        // own refund call) carry what the app needs, so these are recorded but change nothing.
        result = { outcome: `ignored: ${event.type} is not used` };
    }
    await tx
      .update(stripeEvents)
      .set({ outcome: result.outcome, paymentId: result.paymentId ?? null })
      .where(eq(stripeEvents.id, event.id));
    return { outcome: result.outcome, receiptPaymentId: result.receiptPaymentId };
  });
}

/** Latest online attempt of an invoice, for messages on the pay page. */
export async function latestOnlineAttempt(invoiceId: string) {
  const [p] = await db
    .select({
      id: payments.id,
      status: payments.status,
      problem: payments.problem,
      amountMinor: payments.amountMinor,
      updatedAt: payments.updatedAt,
    })
    .from(payments)
    .where(and(eq(payments.invoiceId, invoiceId), eq(payments.method, "card_online")))
    .orderBy(sql`${payments.createdAt} desc`)
    .limit(1);
  return p ?? null;
}
