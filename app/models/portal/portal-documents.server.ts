import { and, eq } from "drizzle-orm";
import { invoices, payments } from "~/db/schema";
import { billingPdf } from "~/models/billing/documents.server";
import { invoiceDetail, invoiceLabel } from "~/models/billing/invoices.server";
import { audit } from "~/utils/audit.server";
import { db } from "~/utils/db.server";
import { notFound } from "~/utils/failure.server";
import type { SessionUser } from "~/utils/session.server";

/**
 * A patient's own invoice PDF (by the invoice's id) or receipt PDF (by a succeeded payment's id),
 * the same documents the practice prints, with an audit row of the download and the file's name.
 * 404 for any id that is not the patient's, a payment that did not succeed, or a draft invoice.
 */
export async function portalBillingDocument(
  user: Pick<SessionUser, "id">,
  patientId: string,
  kind: "invoices" | "payments",
  id: string,
  request: Request,
) {
  let invoiceId: string;
  let paymentId: string | undefined;
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
  return { pdf, fileName: `${paymentId ? "receipt" : "invoice"}-${invoiceLabel(d.invoice.number)}.pdf` };
}
