/**
 * The local Stripe stand-in: the small part of Stripe's HTTP API that Dioptra calls, a page that
 * plays the hosted checkout, and signed webhooks sent back to the app. The app's Stripe SDK is
 * pointed here with its host/port/protocol options; in production the same app code talks to
 * real Stripe.
 *
 *   HTTP 127.0.0.1:$STRIPE_STANDIN_PORT (default 12111)
 *     POST /v1/checkout/sessions              create (mode=payment, line_items[..][price_data], metadata, …)
 *     GET  /v1/checkout/sessions/:id          retrieve
 *     POST /v1/checkout/sessions/:id/expire   expire an open session
 *     GET  /v1/payment_intents/:id            retrieve
 *     POST /v1/refunds                        refund a succeeded payment intent, fully or in part
 *     GET  /checkout/:id                      the checkout page (test card 4242 4242 4242 4242 pays,
 *                                             4000 0000 0000 0002 is declined)
 *   Control API for tests and demos:
 *     GET  /_standin/events                   every event made, with its deliveries
 *     POST /_standin/events/:id/deliver       deliver an event again (a replay)
 *     POST /_standin/events/deliver           {"ids": [...]} — deliver these events in this order
 *     POST /_standin/config                   {"duplicate": bool, "delayMs": n, "webhookUrl": "…"|"", "order": "made"|"reverse"}
 *     POST /_standin/sessions/:id/pay         {"card": "…", "amountTotal"?: n} — pay without the page;
 *                                             {"sepaDebit": "succeeds"|"fails"} — a method that settles
 *                                             later, only where the session allows "sepa_debit"
 *
 * Objects and events follow the shapes in Stripe's API reference for the pinned API version
 * (the SDK's types): an event is {id, object: "event", api_version, created, data: {object},
 * livemode, pending_webhooks, request: {id, idempotency_key}, type}; a Checkout Session carries
 * payment_status "paid" on completion with a card, "unpaid" with a delayed method until
 * checkout.session.async_payment_succeeded (then "paid") or _failed. With "order": "reverse" the
 * events of one payment are delivered newest first, so tests see them out of order.
 *
 * Webhooks go to $STRIPE_WEBHOOK_URL (default $APP_URL/api/webhooks/stripe; empty = keep, don't
 * send), signed with $STRIPE_WEBHOOK_SECRET by the SDK's own generateTestHeaderString. With
 * "duplicate" each event is sent twice; with "delayMs" a (second) delivery comes that much later.
 * State is in memory: a restart forgets open sessions, and the app then simply opens a new one.
 */
import { randomBytes } from "node:crypto";
import { createServer, type IncomingMessage, type ServerResponse } from "node:http";
import Stripe from "stripe";

const port = Number(process.env.STRIPE_STANDIN_PORT ?? 12111);
const apiKey = process.env.STRIPE_SECRET_KEY ?? "sk_test_dioptra_local_standin";
const webhookSecret = process.env.STRIPE_WEBHOOK_SECRET ?? "whsec_dioptra_local_standin";
const config = {
  webhookUrl:
    process.env.STRIPE_WEBHOOK_URL ??
    `${(process.env.APP_URL ?? "http://127.0.0.1:3000").replace(/\/$/, "")}/api/webhooks/stripe`,
  duplicate: process.env.STRIPE_STANDIN_DUPLICATE === "1",
  delayMs: Number(process.env.STRIPE_STANDIN_DELAY_MS ?? 0),
  order: "made" as "made" | "reverse",
};
/** The API version the app's SDK pins (app/utils/payments.server.ts); events are rendered in it. */
const API_VERSION = "2026-10-28.endive";
const DELAYED_METHODS = new Set(["sepa_debit", "bacs_debit", "us_bank_account"]);
const signer = new Stripe(apiKey);

export const TEST_CARDS = { success: "4242424242424242", declined: "4000000000000002" } as const;

type Json = Record<string, unknown>;
type Session = Json & {
  id: string;
  amount_total: number;
  currency: string;
  status: "open" | "complete" | "expired";
  payment_status: "unpaid" | "paid";
  success_url: string;
  cancel_url: string;
  payment_intent: string | null;
  metadata: Record<string, string>;
  url: string | null;
};
type PaymentIntent = Json & {
  id: string;
  amount: number;
  amount_received: number;
  currency: string;
  status: string;
  metadata: Record<string, string>;
};
type EventRecord = {
  id: string;
  type: string;
  created: number;
  body: string;
  deliveries: { at: string; status: number | string; delayed: boolean }[];
};

const sessions = new Map<string, Session>();
const intents = new Map<string, PaymentIntent>();
const refunds = new Map<string, Json>();
/** Refunded amount per payment intent (kept apart: a PaymentIntent has no such field). */
const refundedByIntent = new Map<string, number>();
const events: EventRecord[] = [];
const idempotent = new Map<string, { status: number; body: string }>();

const id = (prefix: string) => `${prefix}_test_${randomBytes(12).toString("hex")}`;
const now = () => Math.floor(Date.now() / 1000);

// ---------- form decoding (Stripe's bracket notation: a[b][0][c]=x) ----------

function decodeForm(body: string): Json {
  const out: Json = {};
  for (const [key, value] of new URLSearchParams(body)) {
    const path = key.replace(/\]/g, "").split("[");
    let node: Record<string, unknown> = out;
    path.forEach((part, i) => {
      if (i === path.length - 1) node[part] = value;
      else node = (node[part] ??= {}) as Record<string, unknown>;
    });
  }
  return out;
}
/** `{0: a, 1: b}` → `[a, b]` */
const asList = (v: unknown): Json[] =>
  v && typeof v === "object" ? Object.values(v as Json).map((x) => x as Json) : [];

// ---------- webhooks ----------

async function deliverOnce(ev: EventRecord, delayed: boolean) {
  if (!config.webhookUrl) return;
  const header = signer.webhooks.generateTestHeaderString({ payload: ev.body, secret: webhookSecret });
  try {
    const res = await fetch(config.webhookUrl, {
      method: "POST",
      headers: { "content-type": "application/json", "stripe-signature": header },
      body: ev.body,
      signal: AbortSignal.timeout(15_000),
    });
    ev.deliveries.push({ at: new Date().toISOString(), status: res.status, delayed });
  } catch (error) {
    ev.deliveries.push({ at: new Date().toISOString(), status: `failed: ${(error as Error).message}`, delayed });
  }
}

/** Records an event with a snapshot of its object as it is now. */
function makeEvent(type: string, object: Json, created = now()): EventRecord {
  const ev: EventRecord = { id: id("evt"), type, created, body: "", deliveries: [] };
  ev.body = JSON.stringify(
    {
      id: ev.id,
      object: "event",
      api_version: API_VERSION,
      created: ev.created,
      data: { object },
      livemode: false,
      pending_webhooks: 1,
      request: { id: null, idempotency_key: null },
      type,
    },
    null,
    2,
  );
  events.push(ev);
  return ev;
}

/** Sends events made together: in the order made, or newest first with config "order": "reverse". */
async function sendAll(evs: EventRecord[], opts: { duplicate?: boolean; delayMs?: number } = {}) {
  for (const ev of config.order === "reverse" ? [...evs].reverse() : evs) await send(ev, opts);
}

/** Makes an event and sends it; resolves after the immediate delivery (a delayed one follows later). */
async function emit(type: string, object: Json, opts: { duplicate?: boolean; delayMs?: number } = {}) {
  return send(makeEvent(type, object), opts);
}

async function send(ev: EventRecord, opts: { duplicate?: boolean; delayMs?: number } = {}) {
  const duplicate = opts.duplicate ?? config.duplicate;
  const delayMs = opts.delayMs ?? config.delayMs;
  if (delayMs > 0 && !duplicate) {
    setTimeout(() => void deliverOnce(ev, true), delayMs);
    return ev;
  }
  await deliverOnce(ev, false);
  if (duplicate) {
    if (delayMs > 0) setTimeout(() => void deliverOnce(ev, true), delayMs);
    else await deliverOnce(ev, false);
  }
  return ev;
}

// ---------- payments ----------

function normaliseCard(card: string) {
  return card.replace(/[\s-]/g, "");
}

type PayResult = { ok: true; session: Session; events: string[] } | { ok: false; message: string; events: string[] };

/** A copy of a PaymentIntent as the API shows it. */
const publicIntent = (pi: PaymentIntent) => ({ ...pi });

async function pay(
  session: Session,
  cardInput: string,
  opts: { duplicate?: boolean; delayMs?: number; amountTotal?: number; sepaDebit?: "succeeds" | "fails" } = {},
): Promise<PayResult> {
  if (session.status === "complete") return { ok: false, message: "This checkout has already been paid.", events: [] };
  if (session.status === "expired")
    return {
      ok: false,
      message: "This checkout has expired. Return to the practice's page and start again.",
      events: [],
    };
  if (opts.sepaDebit) return payLater(session, opts.sepaDebit, opts);
  const card = normaliseCard(cardInput);
  if (!/^\d{12,19}$/.test(card))
    return { ok: false, message: "Enter the card number (digits only). Test card: 4242 4242 4242 4242.", events: [] };
  const amount = opts.amountTotal ?? session.amount_total;
  const pi = newIntent(session, amount, ["card"]);
  if (card === TEST_CARDS.success) {
    pi.status = "succeeded";
    pi.amount_received = amount;
    pi.latest_charge = id("ch");
    Object.assign(session, {
      status: "complete",
      payment_status: "paid",
      payment_intent: pi.id,
      amount_total: amount,
      url: null,
      customer_details: customerDetails(session),
    });
    const made = [
      makeEvent("payment_intent.succeeded", publicIntent(pi)),
      makeEvent("checkout.session.completed", publicSession(session)),
    ];
    await sendAll(made, opts);
    return { ok: true, session, events: made.map((e) => e.id) };
  }
  const declined = card === TEST_CARDS.declined;
  const message = declined
    ? "Your card was declined."
    : "Your card number is not a test card this stand-in knows. Use 4242 4242 4242 4242 to pay, or 4000 0000 0000 0002 to see a decline.";
  pi.last_payment_error = {
    type: "card_error",
    code: declined ? "card_declined" : "incorrect_number",
    decline_code: declined ? "generic_decline" : undefined,
    message,
  };
  const ev = await emit("payment_intent.payment_failed", publicIntent(pi), opts);
  return { ok: false, message, events: [ev.id] };
}

function newIntent(session: Session, amount: number, methods: string[]): PaymentIntent {
  const intentMeta =
    ((session.payment_intent_data as Json | undefined)?.metadata as Record<string, string> | undefined) ?? {};
  const pi: PaymentIntent = {
    id: id("pi"),
    object: "payment_intent",
    amount,
    amount_received: 0,
    currency: session.currency,
    status: "requires_payment_method",
    metadata: intentMeta,
    payment_method_types: methods,
    latest_charge: null,
    last_payment_error: null,
    created: now(),
    livemode: false,
  };
  intents.set(pi.id, pi);
  return pi;
}

function customerDetails(session: Session) {
  return {
    email: session.customer_email ?? null,
    name: null,
    phone: null,
    address: null,
    tax_exempt: "none",
    tax_ids: [],
  };
}

/**
 * A bank debit: the session completes unpaid at once, and the bank's answer comes later as
 * checkout.session.async_payment_succeeded or _failed (both carry the session).
 */
async function payLater(
  session: Session,
  outcome: "succeeds" | "fails",
  opts: { duplicate?: boolean; delayMs?: number },
): Promise<PayResult> {
  const allowed = session.payment_method_types as string[];
  if (!allowed.some((m) => DELAYED_METHODS.has(m)))
    return { ok: false, message: `This checkout accepts only ${allowed.join(", ")}.`, events: [] };
  const pi = newIntent(session, session.amount_total, ["sepa_debit"]);
  pi.status = "processing";
  Object.assign(session, {
    status: "complete",
    payment_status: "unpaid",
    payment_intent: pi.id,
    url: null,
    customer_details: customerDetails(session),
  });
  const made = [makeEvent("checkout.session.completed", publicSession(session))];
  if (outcome === "succeeds") {
    Object.assign(pi, { status: "succeeded", amount_received: pi.amount, latest_charge: id("py") });
    session.payment_status = "paid";
    made.push(
      makeEvent("payment_intent.succeeded", publicIntent(pi), now() + 1),
      makeEvent("checkout.session.async_payment_succeeded", publicSession(session), now() + 1),
    );
  } else {
    Object.assign(pi, {
      status: "requires_payment_method",
      last_payment_error: {
        type: "invalid_request_error",
        code: "payment_method_invalid_parameter",
        message: "The debit was returned by the bank.",
      },
    });
    made.push(
      makeEvent("payment_intent.payment_failed", publicIntent(pi), now() + 1),
      makeEvent("checkout.session.async_payment_failed", publicSession(session), now() + 1),
    );
  }
  await sendAll(made, opts);
  return {
    ok: outcome === "succeeds",
    session,
    events: made.map((e) => e.id),
    ...(outcome === "fails" ? { message: "The debit was returned by the bank." } : {}),
  } as PayResult;
}

// ---------- API ----------

function stripeError(res: ServerResponse, status: number, type: string, message: string, param?: string) {
  json(res, status, { error: { type, message, ...(param ? { param } : {}) } });
}
function json(res: ServerResponse, status: number, body: unknown) {
  res.writeHead(status, { "content-type": "application/json" });
  res.end(JSON.stringify(body));
}

function createSession(p: Json, res: ServerResponse) {
  if (p.mode !== "payment")
    return stripeError(res, 400, "invalid_request_error", "Only mode=payment is supported by the stand-in.", "mode");
  for (const f of ["success_url", "cancel_url"])
    if (typeof p[f] !== "string" || !/^https?:\/\//.test(p[f] as string))
      return stripeError(res, 400, "invalid_request_error", `Missing or invalid ${f}.`, f);
  const items = asList(p.line_items);
  if (!items.length) return stripeError(res, 400, "invalid_request_error", "line_items is required.", "line_items");
  let total = 0;
  let currency = "";
  const lineItems: Json[] = [];
  for (const [i, item] of items.entries()) {
    const pd = item.price_data as Json | undefined;
    const unit = Number(pd?.unit_amount);
    const qty = Number(item.quantity ?? 1);
    if (!pd || !Number.isInteger(unit) || unit < 0)
      return stripeError(
        res,
        400,
        "invalid_request_error",
        "Invalid integer unit_amount.",
        `line_items[${i}][price_data][unit_amount]`,
      );
    if (!Number.isInteger(qty) || qty < 1)
      return stripeError(res, 400, "invalid_request_error", "Invalid quantity.", `line_items[${i}][quantity]`);
    if (typeof pd.currency !== "string")
      return stripeError(
        res,
        400,
        "invalid_request_error",
        "Missing currency.",
        `line_items[${i}][price_data][currency]`,
      );
    if (currency && currency !== pd.currency)
      return stripeError(res, 400, "invalid_request_error", "All line items must share one currency.");
    currency = pd.currency.toLowerCase();
    total += unit * qty;
    lineItems.push({
      description: ((pd.product_data as Json | undefined)?.name as string) ?? "",
      amount_total: unit * qty,
      quantity: qty,
      currency,
    });
  }
  if (total < 30)
    return stripeError(res, 400, "invalid_request_error", "The amount must be at least 30 minor units.", "line_items");
  const sid = id("cs");
  const expiresAt = p.expires_at ? Number(p.expires_at) : now() + 24 * 3600;
  // Stripe: expires_at must be 30 minutes to 24 hours after creation.
  if (
    p.expires_at !== undefined &&
    (!Number.isInteger(expiresAt) || expiresAt < now() + 30 * 60 || expiresAt > now() + 24 * 3600)
  ) {
    return stripeError(
      res,
      400,
      "invalid_request_error",
      "The `expires_at` timestamp must be between 30 minutes and 24 hours from the Checkout Session's creation.",
      "expires_at",
    );
  }
  const allowedTypes =
    p.allowed_payment_method_types === undefined ? null : asList(p.allowed_payment_method_types).map(String);
  const methods = allowedTypes ?? ["card"];
  const session: Session = {
    id: sid,
    object: "checkout.session",
    mode: "payment",
    amount_subtotal: total,
    amount_total: total,
    currency,
    status: "open",
    payment_status: "unpaid",
    success_url: p.success_url as string,
    cancel_url: p.cancel_url as string,
    client_reference_id: (p.client_reference_id as string) ?? null,
    customer_email: (p.customer_email as string) ?? null,
    metadata: (p.metadata as Record<string, string>) ?? {},
    payment_intent_data: p.payment_intent_data ?? {},
    payment_intent: null,
    allowed_payment_method_types: allowedTypes,
    payment_method_types: methods,
    customer: null,
    customer_details: null,
    invoice: null,
    subscription: null,
    setup_intent: null,
    payment_link: null,
    submit_type: null,
    locale: null,
    ui_mode: "hosted",
    total_details: { amount_discount: 0, amount_shipping: 0, amount_tax: 0 },
    expires_at: expiresAt,
    created: now(),
    livemode: false,
    url: `http://127.0.0.1:${port}/checkout/${sid}`,
    display_items: lineItems,
  };
  sessions.set(sid, session);
  json(res, 200, publicSession(session));
}

/** The session as the API shows it (without the stand-in's own bookkeeping); a copy, so events keep their snapshot. */
function publicSession(s: Session) {
  const { display_items: _d, payment_intent_data: _p, ...rest } = s;
  return JSON.parse(JSON.stringify(rest)) as Json;
}

async function createRefund(p: Json, res: ServerResponse) {
  const pi = intents.get(String(p.payment_intent ?? ""));
  if (!pi)
    return stripeError(
      res,
      404,
      "invalid_request_error",
      `No such payment_intent: '${String(p.payment_intent ?? "")}'`,
      "payment_intent",
    );
  if (pi.status !== "succeeded")
    return stripeError(res, 400, "invalid_request_error", "This PaymentIntent has no successful charge to refund.");
  const left = pi.amount_received - (refundedByIntent.get(pi.id) ?? 0);
  const amount = p.amount === undefined ? left : Number(p.amount);
  if (!Number.isInteger(amount) || amount <= 0)
    return stripeError(res, 400, "invalid_request_error", "Invalid positive integer amount.", "amount");
  if (amount > left)
    return stripeError(
      res,
      400,
      "invalid_request_error",
      `Refund amount (${amount}) is greater than unrefunded amount on charge (${left}).`,
      "amount",
    );
  refundedByIntent.set(pi.id, (refundedByIntent.get(pi.id) ?? 0) + amount);
  const refund = {
    id: id("re"),
    object: "refund",
    amount,
    currency: pi.currency,
    payment_intent: pi.id,
    status: "succeeded",
    reason: p.reason ?? null,
    metadata: p.metadata ?? {},
    created: now(),
  };
  refunds.set(refund.id, refund);
  json(res, 200, refund);
  void emit("refund.created", refund);
}

async function readBody(req: IncomingMessage) {
  const chunks: Buffer[] = [];
  for await (const c of req) chunks.push(c as Buffer);
  return Buffer.concat(chunks).toString("utf8");
}

/** The Stripe-Version header of recent API requests (the SDK sends its pinned version). */
const recentVersions: { method: string; path: string; version: string | null }[] = [];

async function api(req: IncomingMessage, res: ServerResponse, path: string, body: string) {
  if (req.headers.authorization !== `Bearer ${apiKey}`)
    return stripeError(res, 401, "invalid_request_error", "Invalid API Key provided.");
  const version = req.headers["stripe-version"];
  recentVersions.push({ method: req.method ?? "", path, version: typeof version === "string" ? version : null });
  if (recentVersions.length > 100) recentVersions.shift();
  const key = req.headers["idempotency-key"];
  const cacheKey = typeof key === "string" && req.method === "POST" ? `${path} ${key}` : null;
  if (cacheKey && idempotent.has(cacheKey)) {
    const hit = idempotent.get(cacheKey)!;
    res.writeHead(hit.status, { "content-type": "application/json", "idempotent-replayed": "true" });
    return res.end(hit.body);
  }
  if (cacheKey) {
    const end = res.end.bind(res);
    res.end = ((chunk: unknown) => {
      idempotent.set(cacheKey, { status: res.statusCode, body: String(chunk ?? "") });
      return end(chunk as string);
    }) as typeof res.end;
  }
  const p = decodeForm(body);
  let m: RegExpMatchArray | null;
  if (req.method === "POST" && path === "/v1/checkout/sessions") return createSession(p, res);
  if (req.method === "GET" && (m = path.match(/^\/v1\/checkout\/sessions\/([\w]+)$/))) {
    const s = sessions.get(m[1]!);
    return s
      ? json(res, 200, publicSession(s))
      : stripeError(res, 404, "invalid_request_error", `No such checkout.session: '${m[1]}'`);
  }
  if (req.method === "POST" && (m = path.match(/^\/v1\/checkout\/sessions\/([\w]+)\/expire$/))) {
    const s = sessions.get(m[1]!);
    if (!s) return stripeError(res, 404, "invalid_request_error", `No such checkout.session: '${m[1]}'`);
    if (s.status !== "open")
      return stripeError(
        res,
        400,
        "invalid_request_error",
        `Only Checkout Sessions with a status in ["open"] can be expired.`,
      );
    Object.assign(s, { status: "expired", url: null });
    json(res, 200, publicSession(s));
    void emit("checkout.session.expired", publicSession(s));
    return;
  }
  if (req.method === "GET" && (m = path.match(/^\/v1\/payment_intents\/([\w]+)$/))) {
    const pi = intents.get(m[1]!);
    return pi
      ? json(res, 200, publicIntent(pi))
      : stripeError(res, 404, "invalid_request_error", `No such payment_intent: '${m[1]}'`);
  }
  if (req.method === "POST" && path === "/v1/refunds") return createRefund(p, res);
  stripeError(
    res,
    404,
    "invalid_request_error",
    `Unrecognized request URL (${req.method}: ${path}). The Dioptra stand-in implements only what the app calls.`,
  );
}

// ---------- the checkout page ----------

const esc = (s: unknown) =>
  String(s ?? "").replace(
    /[&<>"']/g,
    (c) => ({ "&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;", "'": "&#39;" })[c]!,
  );

function money(minor: number, currency: string) {
  return new Intl.NumberFormat("en-GB", { style: "currency", currency: currency.toUpperCase() }).format(minor / 100);
}

function page(title: string, inner: string) {
  return `<!doctype html><html lang="en-GB"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1"><title>${esc(title)}</title>
<style>
body{font-family:system-ui,sans-serif;background:#f4f4f6;color:#1b1b1f;margin:0}
main{max-width:30rem;margin:3rem auto;background:#fff;border:1px solid #c9c9d1;border-radius:10px;padding:2rem}
.banner{background:#fff4d6;border:1px solid #b88a00;border-radius:6px;padding:.5rem .75rem;font-size:.85rem;margin-bottom:1.25rem}
h1{font-size:1.4rem;margin:0 0 .25rem} .amount{font-size:2rem;font-weight:700;margin:.5rem 0 1.25rem}
label{display:block;font-weight:600;margin:.9rem 0 .3rem} input[type=text]{width:100%;box-sizing:border-box;padding:.6rem;border:1px solid #77777f;border-radius:6px;font-size:1rem}
.check{display:flex;gap:.5rem;align-items:center;font-weight:400;margin:.4rem 0}
button{margin-top:1.25rem;width:100%;padding:.8rem;font-size:1rem;font-weight:700;background:#3a2d91;color:#fff;border:0;border-radius:6px;cursor:pointer}
.error{background:#fde8e8;border:1px solid #b42318;color:#7a1010;border-radius:6px;padding:.6rem .75rem;margin:1rem 0}
.hint{font-size:.85rem;color:#4a4a55} a{color:#3a2d91;font-weight:600}
details{margin-top:1rem} ul{padding-left:1.2rem}
</style></head><body><main id="main">
<p class="banner"><strong>Test mode.</strong> This is the local stand-in for Stripe's hosted checkout. No real card is charged.</p>
${inner}</main></body></html>`;
}

function checkoutPage(s: Session, error?: string) {
  const items = ((s.display_items as Json[]) ?? [])
    .map((i) => `<li>${esc(i.description)} — ${esc(money(Number(i.amount_total), s.currency))}</li>`)
    .join("");
  if (s.status !== "open") {
    return page(
      "Checkout closed",
      `<h1>${s.status === "complete" ? "Already paid" : "This checkout has expired"}</h1><p>${s.status === "complete" ? "This checkout has already been paid." : "Start again from the practice's payment page."}</p><p><a href="${esc(s.status === "complete" ? s.success_url.replace("{CHECKOUT_SESSION_ID}", s.id) : s.cancel_url)}">Return to the practice</a></p>`,
    );
  }
  return page(
    `Pay ${money(s.amount_total, s.currency)}`,
    `<h1>Pay ${esc((s.metadata.description as string) ?? "your invoice")}</h1>
<p class="amount">${esc(money(s.amount_total, s.currency))}</p>
<ul>${items}</ul>
${error ? `<div class="error" role="alert"><strong>Payment not made.</strong> ${esc(error)}</div>` : ""}
<form method="post" action="/checkout/${esc(s.id)}/pay">
<label for="email">E-mail</label><input type="text" id="email" name="email" autocomplete="email" value="${esc(s.customer_email ?? "")}">
<label for="card">Card number</label><input type="text" id="card" name="card" inputmode="numeric" autocomplete="cc-number" aria-describedby="card-hint" required>
<p id="card-hint" class="hint">Test cards: 4242 4242 4242 4242 pays; 4000 0000 0000 0002 is declined.</p>
<label for="expiry">Expiry (MM / YY)</label><input type="text" id="expiry" name="expiry" autocomplete="cc-exp" value="12 / 34">
<label for="cvc">Security code</label><input type="text" id="cvc" name="cvc" autocomplete="cc-csc" value="123">
<details><summary>Webhook delivery (stand-in options)</summary>
<label class="check"><input type="checkbox" name="duplicate" value="1"> Send each webhook twice</label>
<label class="check"><input type="checkbox" name="delayed" value="1"> Delay a delivery by 3 seconds</label>
</details>
<button type="submit">Pay ${esc(money(s.amount_total, s.currency))}</button>
</form>
<p><a href="${esc(s.cancel_url)}">Cancel and return to the practice</a></p>`,
  );
}

function html(res: ServerResponse, status: number, body: string) {
  res.writeHead(status, { "content-type": "text/html; charset=utf-8" });
  res.end(body);
}

// ---------- server ----------

const server = createServer(async (req, res) => {
  try {
    const url = new URL(req.url ?? "/", `http://127.0.0.1:${port}`);
    const path = url.pathname;
    const body = req.method === "POST" ? await readBody(req) : "";
    if (path.startsWith("/v1/")) return await api(req, res, path, body);

    let m: RegExpMatchArray | null;
    if (req.method === "GET" && (m = path.match(/^\/checkout\/([\w]+)$/))) {
      const s = sessions.get(m[1]!);
      return s
        ? html(res, 200, checkoutPage(s))
        : html(
            res,
            404,
            page(
              "Not found",
              "<h1>No such checkout</h1><p>This payment page does not exist (the stand-in may have restarted). Return to the practice's page and start again.</p>",
            ),
          );
    }
    if (req.method === "POST" && (m = path.match(/^\/checkout\/([\w]+)\/pay$/))) {
      const s = sessions.get(m[1]!);
      if (!s) return html(res, 404, page("Not found", "<h1>No such checkout</h1>"));
      const f = new URLSearchParams(body);
      const result = await pay(s, f.get("card") ?? "", {
        duplicate: f.get("duplicate") === "1" || undefined,
        delayMs: f.get("delayed") === "1" ? 3000 : undefined,
      });
      if (result.ok) {
        res.writeHead(303, { location: s.success_url.replace("{CHECKOUT_SESSION_ID}", s.id) });
        return res.end();
      }
      return html(res, 402, checkoutPage(s, result.message));
    }

    if (path === "/_standin/health")
      return json(res, 200, {
        status: "ok",
        sessions: sessions.size,
        events: events.length,
        apiVersion: API_VERSION,
        requests: recentVersions,
      });
    if (req.method === "GET" && path === "/_standin/events")
      return json(
        res,
        200,
        events.map((e) => ({ id: e.id, type: e.type, created: e.created, payload: e.body, deliveries: e.deliveries })),
      );
    if (req.method === "POST" && (m = path.match(/^\/_standin\/events\/([\w]+)\/deliver$/))) {
      const ev = events.find((e) => e.id === m![1]);
      if (!ev) return json(res, 404, { error: "no such event" });
      await deliverOnce(ev, false);
      return json(res, 200, { id: ev.id, deliveries: ev.deliveries });
    }
    if (req.method === "POST" && path === "/_standin/events/deliver") {
      const { ids } = JSON.parse(body || "{}") as { ids?: string[] };
      const chosen = (ids ?? []).map((i) => events.find((e) => e.id === i));
      if (!ids?.length || chosen.some((e) => !e))
        return json(res, 404, { error: "give ids of events the stand-in made" });
      for (const ev of chosen) await deliverOnce(ev!, false);
      return json(
        res,
        200,
        chosen.map((e) => ({ id: e!.id, type: e!.type, deliveries: e!.deliveries })),
      );
    }
    if (req.method === "POST" && path === "/_standin/config") {
      const c = JSON.parse(body || "{}") as Partial<typeof config>;
      if (c.order === "made" || c.order === "reverse") config.order = c.order;
      if (typeof c.duplicate === "boolean") config.duplicate = c.duplicate;
      if (typeof c.delayMs === "number") config.delayMs = c.delayMs;
      if (typeof c.webhookUrl === "string") config.webhookUrl = c.webhookUrl;
      return json(res, 200, config);
    }
    if (req.method === "POST" && (m = path.match(/^\/_standin\/sessions\/([\w]+)\/pay$/))) {
      const s = sessions.get(m[1]!);
      if (!s) return json(res, 404, { error: "no such session" });
      const p = JSON.parse(body || "{}") as {
        card?: string;
        amountTotal?: number;
        duplicate?: boolean;
        delayMs?: number;
        sepaDebit?: "succeeds" | "fails";
      };
      const result = await pay(s, p.card ?? TEST_CARDS.success, p);
      return json(res, result.ok ? 200 : 402, result);
    }
    html(res, 404, page("Not found", "<h1>Not found</h1>"));
  } catch (error) {
    console.error("[stripe stand-in]", error);
    if (!res.headersSent) json(res, 500, { error: { type: "api_error", message: (error as Error).message } });
  }
});

server.listen(port, "127.0.0.1", () =>
  console.log(`[stripe stand-in] http://127.0.0.1:${port}; webhooks to ${config.webhookUrl || "(kept, not sent)"}`),
);
for (const sig of ["SIGTERM", "SIGINT"]) process.on(sig, () => server.close(() => process.exit(0)));
