import { and, eq } from "drizzle-orm";
import type { Route } from "./+types/reply-file";
import { isUuid } from "~/models/referrals/referrals.server";
import { referralReplies } from "~/db/schema";
import { audit } from "~/utils/audit.server";
import { CLINICAL_ROLES, requireRole } from "~/utils/auth.server";
import { db } from "~/utils/db.server";
import { openStored } from "~/utils/storage-response.server";
import { notFound } from "~/utils/failure.server";

/** A consult letter uploaded by the recipient, for the practice's clinicians. */
export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, CLINICAL_ROLES);
  if (!isUuid(params.referralId) || !isUuid(params.replyId)) notFound();
  const [reply] = await db
    .select()
    .from(referralReplies)
    .where(and(eq(referralReplies.id, params.replyId), eq(referralReplies.referralId, params.referralId)));
  if (!reply?.fileKey || !reply.fileType) notFound();
  const file = await openStored(reply.fileKey);
  if (!file) notFound("The file is missing from storage.");
  await audit({
    action: "referral.reply_file_viewed",
    actorUserId: user.id,
    entityType: "referral_reply",
    entityId: reply.id,
    patientId: reply.patientId,
    request,
  });
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
