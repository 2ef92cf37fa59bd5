import type { Route } from "./+types/document-file";
import { assertPatientAccess, CLINICAL_ROLES, requireUser } from "~/utils/auth.server";
import { openPatientDocument } from "~/models/patients/documents.server";
import { isUuid } from "~/models/patients/patient-schema";
import { notFound, invariantResponse } from "~/utils/failure.server";

/** GET /patients/:patientId/documents/:documentId/(file|thumbnail) — clinical roles only. */
export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireUser(request);
  assertPatientAccess(user, params.patientId);
  if (!(CLINICAL_ROLES as readonly string[]).includes(user.role))
    invariantResponse(false, "Your role does not give access to clinical documents.", 403);
  if (!isUuid(params.patientId) || !isUuid(params.documentId) || !["file", "thumbnail"].includes(params.variant))
    notFound();
  const thumb = params.variant === "thumbnail";
  const { doc, file } = await openPatientDocument(
    user,
    params.patientId,
    params.documentId,
    thumb ? "thumbnail" : "file",
    request,
  );
  const safeName = doc.originalName.replace(/[^\w.\- ]+/g, "_");
  // Streamed from object storage through the app, after the role and patient checks above.
  return new Response(file.body, {
    headers: {
      "content-type": thumb ? "image/jpeg" : doc.contentType,
      ...(file.size !== null ? { "content-length": String(file.size) } : {}),
      "content-disposition": `${doc.contentType === "application/pdf" || thumb ? "inline" : "inline"}; filename="${safeName}"`,
      "cache-control": "private, no-store",
      "x-content-type-options": "nosniff",
    },
  });
}
