import type { Route } from "./+types/invoice-pdf";
import { invoiceForToken } from "~/models/billing/pay.server";
import { billingPdf } from "~/models/billing/documents.server";
import { invoiceLabel } from "~/models/billing/invoices.server";

/** The invoice PDF behind a pay-by-link (the token is the guard, as for the page). */
export async function loader({ params }: Route.LoaderArgs) {
  const { detail } = await invoiceForToken(params.token);
  const pdf = await billingPdf(detail, "invoice");
  return new Response(Buffer.from(pdf), {
    headers: {
      "content-type": "application/pdf",
      "content-disposition": `inline; filename="invoice-${invoiceLabel(detail.invoice.number)}.pdf"`,
      "cache-control": "private, no-store",
    },
  });
}
