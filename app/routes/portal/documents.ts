import { z } from "zod";
import type { Route } from "./+types/documents";
import { requirePortalPatient } from "~/models/portal/portal.server";
import { portalBillingDocument } from "~/models/portal/portal-documents.server";
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
  const kind = new URL(request.url).pathname.startsWith("/portal/payments/") ? "payments" : "invoices";
  const { pdf, fileName } = await portalBillingDocument(user, patientId, kind, id, request);
  return new Response(Buffer.from(pdf), {
    headers: {
      "content-type": "application/pdf",
      "content-disposition": `inline; filename="${fileName}"`,
      "cache-control": "private, no-store",
    },
  });
}
