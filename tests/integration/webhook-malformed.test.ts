/** A correctly signed Stripe event with fields missing or of the wrong type is refused with 400, never a 500, and records nothing. */
import { eq } from "drizzle-orm";
import Stripe from "stripe";
import { describe, expect, it } from "vitest";
import { action as webhookAction } from "~/routes/api/webhooks/stripe";
import { stripeEvents } from "~/db/schema";
import { db } from "~/utils/db.server";
import { run, statusOf } from "#tests/support/helpers";

const SECRET = "whsec_dioptra_local_standin";
const signer = new Stripe("sk_test_dioptra_local_standin");

function signed(event: unknown) {
  const payload = JSON.stringify(event);
  return new Request("http://127.0.0.1:3000/api/webhooks/stripe", {
    method: "POST",
    headers: {
      "stripe-signature": signer.webhooks.generateTestHeaderString({ payload, secret: SECRET }),
      "content-type": "application/json",
    },
    body: payload,
  });
}

describe("signed Stripe events with missing fields", () => {
  const created = Math.floor(Date.now() / 1000);
  it.each([
    ["no data", { id: "evt_missing_data", type: "checkout.session.completed", created }],
    ["no object", { id: "evt_missing_object", type: "checkout.session.completed", created, data: {} }],
    [
      "object without id",
      {
        id: "evt_object_no_id",
        type: "checkout.session.expired",
        created,
        data: { object: { object: "checkout.session" } },
      },
    ],
    ["no id", { type: "checkout.session.completed", created, data: { object: { id: "cs_test_x" } } }],
    [
      "id of the wrong type",
      { id: 42, type: "checkout.session.completed", created, data: { object: { id: "cs_test_x" } } },
    ],
    ["no type", { id: "evt_no_type", created, data: { object: { id: "cs_test_x" } } }],
    [
      "created as text",
      {
        id: "evt_created_text",
        type: "payment_intent.payment_failed",
        created: "yesterday",
        data: { object: { id: "pi_x" } },
      },
    ],
    ["data as an array", { id: "evt_data_array", type: "checkout.session.completed", created, data: [] }],
  ])("%s → 400 naming the field", async (_, event) => {
    const res = await run(webhookAction, signed(event));
    expect(statusOf(res)).toBe(400);
    const body = (await (res as Response).json()) as { error: string };
    expect(body.error).toMatch(/missing or has malformed fields/);
    if (typeof (event as { id?: unknown }).id === "string") {
      expect(
        await db
          .select()
          .from(stripeEvents)
          .where(eq(stripeEvents.id, (event as { id: string }).id)),
      ).toHaveLength(0);
    }
  });
});
