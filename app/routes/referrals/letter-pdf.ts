import type { Route } from "./+types/letter-pdf";
import { loadReferral, referenceOf, renderLetter } from "~/models/referrals/referrals.server";
import { audit } from "~/utils/audit.server";
import { CLINICAL_ROLES, requireRole } from "~/utils/auth.server";

/** The letter PDF for the practice's clinicians (inline for the preview, ?download=1 to save it). */
export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, CLINICAL_ROLES);
  const r = await loadReferral(params.referralId);
  const pdf = await renderLetter(r);
  await audit({
    action: "referral.letter_viewed",
    actorUserId: user.id,
    entityType: "referral",
    entityId: r.referral.id,
    patientId: r.patient.id,
    request,
  });
  const download = new URL(request.url).searchParams.get("download") === "1";
  return new Response(Buffer.from(pdf), {
    headers: {
      "content-type": "application/pdf",
      "content-disposition": `${download ? "attachment" : "inline"}; filename="referral-${referenceOf(r.referral.number)}.pdf"`,
      "cache-control": "private, no-store",
      "x-content-type-options": "nosniff",
    },
  });
}
