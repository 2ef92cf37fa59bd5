import type { Route } from "./+types/stripe";
import { processStripeEvent } from "~/models/billing/checkout.server";
import { emailReceiptQuietly } from "~/models/billing/documents.server";
import { verifyWebhook } from "~/utils/payments.server";
import { z } from "zod";

/** The fields every handled event needs; a signed event without them is refused, not crashed on. */
const eventShape = z.object({
  id: z.string().min(1).max(255),
  type: z.string().min(1).max(255),
  created: z.number().int().nonnegative(),
  data: z.object({ object: z.looseObject({ id: z.string().min(1).max(255) }) }),
});

/**
 * Stripe's webhooks. No session: the signature (Stripe-Signature, checked against
 * STRIPE_WEBHOOK_SECRET over the raw body) is the guard. A bad signature answers 400 and changes
 * nothing; a verified event is applied at most once (see processStripeEvent).
 */
export async function action({ request }: Route.ActionArgs) {
  if (request.method !== "POST") return Response.json({ error: "Use POST." }, { status: 405 });
  const payload = await request.text();
  let event;
  try {
    event = verifyWebhook(payload, request.headers.get("stripe-signature"));
  } catch (error) {
    return Response.json({ error: `Webhook refused: ${(error as Error).message}` }, { status: 400 });
  }
  const shape = eventShape.safeParse(event);
  if (!shape.success) {
    const missing = shape.error.issues.map((i) => i.path.join(".") || "(the event)").join(", ");
    return Response.json(
      { error: `Webhook refused: the event is missing or has malformed fields: ${missing}.` },
      { status: 400 },
    );
  }
  const result = await processStripeEvent(event);
  if (result.receiptPaymentId) await emailReceiptQuietly(result.receiptPaymentId);
  return Response.json({ received: true, id: event.id, outcome: result.outcome });
}

export async function loader() {
  return Response.json({ error: "Stripe webhooks are POSTed here." }, { status: 405 });
}
