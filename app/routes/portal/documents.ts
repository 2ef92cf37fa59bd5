import { and, eq } from "drizzle-orm";
import { z } from "zod";
import type { Route } from "./+types/documents";
import { requirePortalPatient } from "~/models/portal/portal.server";
import { invoices, payments } from "~/db/schema";
import { billingPdf } from "~/models/billing/documents.server";
import { invoiceDetail, invoiceLabel } from "~/models/billing/invoices.server";
import { audit } from "~/utils/audit.server";
import { db } from "~/utils/db.server";
import { notFound } from "~/utils/failure.server";

/**
 * The patient's own invoice PDF (/portal/invoices/:id/invoice.pdf) or receipt PDF
 * (/portal/payments/:id/receipt.pdf) — the same documents the practice prints. Any id that is
 * not the patient's answers 404.
 */
export async function loader({ request, params }: Route.LoaderArgs) {
  const { user, patientId } = await requirePortalPatient(request);
  const id = params.id ?? "";
  if (!z.uuid().safeParse(id).success) notFound();
  let invoiceId: string;
  let paymentId: string | undefined;
  const kind = new URL(request.url).pathname.startsWith("/portal/payments/") ? "payments" : "invoices";
  if (kind === "payments") {
    const [p] = await db
      .select({ invoiceId: payments.invoiceId })
      .from(payments)
      .innerJoin(invoices, eq(invoices.id, payments.invoiceId))
      .where(and(eq(payments.id, id), eq(invoices.patientId, patientId), eq(payments.status, "succeeded")));
    if (!p) notFound();
    invoiceId = p.invoiceId;
    paymentId = id;
  } else {
    invoiceId = id;
  }
  const d = await invoiceDetail(invoiceId);
  if (!d || d.patient.id !== patientId || d.invoice.status === "draft") notFound();
  const pdf = await billingPdf(d, paymentId ? "receipt" : "invoice", paymentId);
  await audit({
    action: paymentId ? "portal.receipt_pdf" : "portal.invoice_pdf",
    actorUserId: user.id,
    patientId,
    entityType: paymentId ? "payment" : "invoice",
    entityId: paymentId ?? invoiceId,
    request,
  });
  const name = `${paymentId ? "receipt" : "invoice"}-${invoiceLabel(d.invoice.number)}.pdf`;
  return new Response(Buffer.from(pdf), {
    headers: {
      "content-type": "application/pdf",
      "content-disposition": `inline; filename="${name}"`,
      "cache-control": "private, no-store",
    },
  });
}
