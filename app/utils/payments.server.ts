import Stripe from "stripe";
import { env } from "./env.server";

/** Port of the local Stripe stand-in (app/standins/stripe-server.ts) when nothing else is set. */
export const STRIPE_STANDIN_DEFAULT = { host: "127.0.0.1", port: 12111, protocol: "http" as const };

/** The stand-in's own test key: the default when STRIPE_SECRET_KEY is not set. */
export const STANDIN_SECRET_KEY = "sk_test_dioptra_local_standin";

/**
 * Where the SDK talks to: STRIPE_API_HOST/PORT/PROTOCOL when set; otherwise the local stand-in
 * while no real key is configured; otherwise (a real key, no host) real Stripe.
 */
export function stripeEndpoint(): { host: string; port: number; protocol: "http" | "https" } | null {
  if (env.STRIPE_API_HOST)
    return {
      host: env.STRIPE_API_HOST,
      port: env.STRIPE_API_PORT ?? (env.STRIPE_API_PROTOCOL === "http" ? 80 : 443),
      protocol: env.STRIPE_API_PROTOCOL ?? "https",
    };
  if (env.STRIPE_SECRET_KEY === STANDIN_SECRET_KEY) return STRIPE_STANDIN_DEFAULT;
  return null;
}

/**
 * The Stripe API version every request names (the SDK's own release is built for it), so an
 * account's default version, changed in the Dashboard, cannot change the shapes this code reads.
 * Webhook endpoints must be created with the same version; the stand-in sends it too.
 */
export const STRIPE_API_VERSION = "2026-10-28.endive" as const;

let client: Stripe | null = null;

/** The one Stripe SDK client of this process. Short timeout: a patient is waiting on the other end. */
export function stripe(): Stripe {
  if (client) return client;
  const endpoint = stripeEndpoint();
  client = new Stripe(env.STRIPE_SECRET_KEY, {
    apiVersion: STRIPE_API_VERSION,
    maxNetworkRetries: 1,
    timeout: 10_000,
    telemetry: false,
    ...(endpoint ? { host: endpoint.host, port: endpoint.port, protocol: endpoint.protocol } : {}),
  });
  return client;
}

const STANDIN_WEBHOOK_SECRET = "whsec_dioptra_local_standin";

/** Verifies a webhook's signature against STRIPE_WEBHOOK_SECRET; throws when it does not match. */
export function verifyWebhook(payload: string, signature: string | null): Stripe.Event {
  // The stand-in's secret is public: in production it would let anyone forge a payment.
  if (env.NODE_ENV === "production" && !env.DIOPTRA_DEMO && env.STRIPE_WEBHOOK_SECRET === STANDIN_WEBHOOK_SECRET) {
    throw new Error("STRIPE_WEBHOOK_SECRET is not configured, so no webhook can be trusted.");
  }
  if (!signature) throw new Error("The Stripe-Signature header is missing.");
  return stripe().webhooks.constructEvent(payload, signature, env.STRIPE_WEBHOOK_SECRET);
}

/** A failure to reach Stripe at all (down, refused, timed out), as opposed to Stripe refusing the request. */
export function isStripeUnreachable(error: unknown): boolean {
  return (
    error instanceof Stripe.errors.StripeConnectionError ||
    (error instanceof Error && /ECONNREFUSED|ETIMEDOUT|socket hang up/i.test(error.message))
  );
}

export { Stripe };
