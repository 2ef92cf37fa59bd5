import type { Route } from "./+types/reply-letter";
import { linkRefusal } from "~/models/referrals/public.server";
import { loadReferral, referenceOf, renderLetter } from "~/models/referrals/referrals.server";
import { verifyLink } from "~/models/referrals/links.server";
import { audit } from "~/utils/audit.server";

/** The letter PDF for the recipient, through their signed link only. */
export async function loader({ request, params }: Route.LoaderArgs) {
  const check = await verifyLink(params.token);
  if (!check.ok) {
    await linkRefusal(check, request, "letter");
    return new Response("This link is not valid. Contact the practice that sent the referral.", {
      status: check.reason === "expired" ? 410 : 404,
      headers: { "content-type": "text/plain; charset=utf-8" },
    });
  }
  const r = await loadReferral(check.referralId);
  if (r.referral.status === "withdrawn" || r.referral.status === "draft")
    return new Response("This referral is no longer available.", {
      status: 410,
      headers: { "content-type": "text/plain; charset=utf-8" },
    });
  const pdf = await renderLetter(r);
  await audit({
    action: "referral.link_letter_downloaded",
    entityType: "referral",
    entityId: r.referral.id,
    patientId: r.patient.id,
    detail: { linkId: check.linkId },
    request,
  });
  return new Response(Buffer.from(pdf), {
    headers: {
      "content-type": "application/pdf",
      "content-disposition": `inline; filename="referral-${referenceOf(r.referral.number)}.pdf"`,
      "cache-control": "private, no-store",
      "x-content-type-options": "nosniff",
      "referrer-policy": "no-referrer",
    },
  });
}
