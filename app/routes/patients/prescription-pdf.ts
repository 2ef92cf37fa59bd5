import type { Route } from "./+types/prescription-pdf";
import { audit } from "~/utils/audit.server";
import { assertPatientAccess, requireUser } from "~/utils/auth.server";
import { isUuid } from "~/models/patients/patient-schema";
import { prescriptionPdf } from "~/models/prescriptions/prescription-pdf.server";
import { notFound } from "~/utils/failure.server";

/**
 * GET /patients/:patientId/prescriptions/:prescriptionId/pdf — every prescription is signed at
 * issue, so the front desk may print it; a patient only their own.
 */
export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireUser(request);
  assertPatientAccess(user, params.patientId);
  if (!isUuid(params.patientId) || !isUuid(params.prescriptionId)) notFound();
  const { rx, bytes, fileName } = await prescriptionPdf(params.patientId, params.prescriptionId);
  await audit({
    action: "prescription.printed",
    actorUserId: user.id,
    entityType: "prescription",
    entityId: rx.id,
    patientId: rx.patientId,
    request,
  });
  return new Response(new Uint8Array(bytes), {
    headers: {
      "content-type": "application/pdf",
      "content-disposition": `attachment; filename="${fileName}"`,
      "cache-control": "private, no-store",
    },
  });
}
