import { and, eq } from "drizzle-orm";
import type { Route } from "./+types/document-file";
import { documents } from "~/db/schema";
import { audit } from "~/utils/audit.server";
import { assertPatientAccess, CLINICAL_ROLES, requireUser } from "~/utils/auth.server";
import { db } from "~/utils/db.server";
import { openStored } from "~/utils/storage-response.server";
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
  const [doc] = await db
    .select()
    .from(documents)
    .where(and(eq(documents.id, params.documentId), eq(documents.patientId, params.patientId)));
  if (!doc) notFound();
  const thumb = params.variant === "thumbnail";
  const key = thumb ? doc.thumbnailKey : doc.storageKey;
  const file = key ? await openStored(key) : null;
  if (!file) notFound();
  if (!thumb)
    await audit({
      action: "document.read",
      actorUserId: user.id,
      entityType: "document",
      entityId: doc.id,
      patientId: doc.patientId,
      request,
    });
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
