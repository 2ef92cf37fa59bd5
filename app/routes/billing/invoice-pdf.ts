import { z } from "zod";
import type { Route } from "./+types/invoice-pdf";
import { billingPdf } from "~/models/billing/documents.server";
import { BILLING_ROLES, invoiceDetail, invoiceLabel } from "~/models/billing/invoices.server";
import { audit } from "~/utils/audit.server";
import { requireRole } from "~/utils/auth.server";
import { notFound } from "~/utils/failure.server";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, BILLING_ROLES);
  if (!z.uuid().safeParse(params.invoiceId).success) notFound("There is no such invoice.");
  const d = await invoiceDetail(params.invoiceId);
  if (!d || d.invoice.status === "draft") notFound("There is no such invoice (a draft has no PDF until it is issued).");
  const pdf = await billingPdf(d, "invoice");
  await audit({
    action: "billing.invoice_pdf",
    actorUserId: user.id,
    entityType: "invoice",
    entityId: d.invoice.id,
    patientId: d.patient.id,
    request,
  });
  return new Response(Buffer.from(pdf), {
    headers: {
      "content-type": "application/pdf",
      "content-disposition": `inline; filename="invoice-${invoiceLabel(d.invoice.number)}.pdf"`,
      "cache-control": "private, no-store",
    },
  });
}
