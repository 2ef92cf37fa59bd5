import { data } from "react-router";
import { verifyPayLink } from "~/models/billing/checkout.server";
import { invoiceDetail } from "~/models/billing/invoices.server";
import { notFound } from "~/utils/failure.server";

/** The one invoice a pay-link token reveals; 404 for a forged token, 410 for an expired one. */
export async function invoiceForToken(token: string) {
  const check = verifyPayLink(token);
  if (!check.ok) {
    throw data(
      {
        error:
          check.reason === "expired"
            ? "This payment link has expired. Ask the practice to send a new one, or pay at the practice."
            : "This payment link does not work. Check that the whole address was copied, or ask the practice for a new one.",
      },
      { status: check.reason === "expired" ? 410 : 404 },
    );
  }
  const d = await invoiceDetail(check.invoiceId);
  if (!d || d.invoice.status === "draft") notFound("This payment link does not work.");
  return { detail: d, expiresAt: check.expiresAt };
}
