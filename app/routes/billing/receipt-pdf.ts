import { z } from "zod";
import type { Route } from "./+types/receipt-pdf";
import { billingPdf } from "~/models/billing/documents.server";
import { BILLING_ROLES, invoiceDetail, invoiceLabel, paymentForReceipt } from "~/models/billing/invoices.server";
import { audit } from "~/utils/audit.server";
import { requireRole } from "~/utils/auth.server";
import { notFound } from "~/utils/failure.server";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, BILLING_ROLES);
  if (!z.uuid().safeParse(params.paymentId).success) notFound("There is no such payment.");
  const p = await paymentForReceipt(params.paymentId);
  if (!p || p.status !== "succeeded") notFound("There is no receipt for this payment.");
  const d = (await invoiceDetail(p.invoiceId))!;
  const pdf = await billingPdf(d, "receipt", params.paymentId);
  await audit({
    action: "billing.receipt_pdf",
    actorUserId: user.id,
    entityType: "payment",
    entityId: params.paymentId,
    patientId: d.patient.id,
    request,
  });
  return new Response(Buffer.from(pdf), {
    headers: {
      "content-type": "application/pdf",
      "content-disposition": `inline; filename="receipt-${invoiceLabel(d.invoice.number)}.pdf"`,
      "cache-control": "private, no-store",
    },
  });
}
