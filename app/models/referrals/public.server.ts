import { eq } from "drizzle-orm";
import { referralLinks } from "~/db/schema";
import { audit } from "~/utils/audit.server";
import { db } from "~/utils/db.server";
import type { LinkCheck } from "./links.server";

/** Audits a refused link (tampered, expired, revoked); only the ids the token claimed are kept, and only when its signature held. */
export async function linkRefusal(check: Extract<LinkCheck, { ok: false }>, request: Request, what: string) {
  const signed = check.reason !== "malformed" && check.reason !== "bad signature";
  await audit({
    action: "referral.link_refused",
    entityType: signed && check.referralId ? "referral" : undefined,
    entityId: signed ? check.referralId : undefined,
    detail: { reason: check.reason, what, linkId: signed ? check.linkId : undefined },
    request,
  });
}

/** Audits an accepted access and stamps the link's last use. */
export async function linkAccess(
  check: { linkId: string; referralId: string },
  patientId: string,
  request: Request,
  what: string,
) {
  await db.update(referralLinks).set({ lastOpenedAt: new Date() }).where(eq(referralLinks.id, check.linkId));
  await audit({
    action: "referral.link_opened",
    entityType: "referral",
    entityId: check.referralId,
    patientId,
    detail: { linkId: check.linkId, what },
    request,
  });
}
