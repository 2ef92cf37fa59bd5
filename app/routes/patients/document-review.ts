import type { Route } from "./+types/document-review";
import { markDocumentReviewed } from "~/models/patients/documents.server";
import { isUuid } from "~/models/patients/patient-schema";
import { assertPatientAccess, CLINICAL_ROLES, requireRole } from "~/utils/auth.server";
import { notFound } from "~/utils/failure.server";
import { redirectWithToast } from "~/utils/toast.server";

/**
 * POST /patients/:patientId/documents/:documentId/review — a clinician records that they read a
 * result; back to the page it was marked on (the chart or the exam), with a message.
 */
export async function action({ request, params }: Route.ActionArgs) {
  const user = await requireRole(request, CLINICAL_ROLES);
  assertPatientAccess(user, params.patientId);
  if (!isUuid(params.patientId) || !isUuid(params.documentId)) notFound();
  const form = await request.formData();
  const back = String(form.get("back") ?? "");
  // Only a page of this patient's record: never a redirect elsewhere.
  const to =
    back.startsWith(`/patients/${params.patientId}`) && !back.startsWith("//") ? back : `/patients/${params.patientId}`;
  const result = await markDocumentReviewed(user, params.patientId, params.documentId, request);
  if (!result.found) notFound();
  return redirectWithToast(
    to,
    result.alreadyBy
      ? { kind: "info", title: `Already marked reviewed by ${result.alreadyBy}` }
      : { kind: "success", title: "Result marked reviewed" },
  );
}
