import type { Route } from "./+types/reply-file";
import { isUuid, openReplyFile } from "~/models/referrals/referrals.server";
import { CLINICAL_ROLES, requireRole } from "~/utils/auth.server";
import { notFound } from "~/utils/failure.server";

/** A consult letter uploaded by the recipient, for the practice's clinicians. */
export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, CLINICAL_ROLES);
  if (!isUuid(params.referralId) || !isUuid(params.replyId)) notFound();
  const { reply, file } = await openReplyFile(user, params.referralId, params.replyId, request);
  const safeName = (reply.fileName ?? "consult-letter").replace(/[^\w.\- ]+/g, "_");
  return new Response(file.body, {
    headers: {
      "content-type": reply.fileType,
      ...(file.size !== null ? { "content-length": String(file.size) } : {}),
      "content-disposition": `inline; filename="${safeName}"`,
      "cache-control": "private, no-store",
      "x-content-type-options": "nosniff",
    },
  });
}
