/**
 * Signed, expiring links for the referral's recipient (no account). A token is
 *   base64url(JSON {l: link id, r: referral id, e: expiry in seconds}) "." base64url(HMAC-SHA256)
 * keyed by a key derived from SESSION_SECRET for this purpose only. The link id is a nonce with
 * a row in referral_links, so a link can be revoked; the row's expiry and the signed expiry
 * must both hold, and the link works only for the referral it names.
 */
import { createHmac, timingSafeEqual } from "node:crypto";
import { and, eq, isNull } from "drizzle-orm";
import { referralLinks } from "~/db/schema";
import { db, type Tx } from "~/utils/db.server";
import { env } from "~/utils/env.server";

/** How long a recipient's link works. */
export const LINK_TTL_DAYS = 60;

function keys(): Buffer[] {
  // Every configured secret verifies (rotation); the first signs.
  return env.SESSION_SECRET.split(",").map((secret) =>
    createHmac("sha256", secret).update("dioptra referral-link v1").digest(),
  );
}

const mac = (key: Buffer, payload: string) => createHmac("sha256", key).update(payload).digest();

export function signLink(link: { id: string; referralId: string; expiresAt: Date }): string {
  const payload = Buffer.from(
    JSON.stringify({ l: link.id, r: link.referralId, e: Math.floor(link.expiresAt.getTime() / 1000) }),
  ).toString("base64url");
  return `${payload}.${mac(keys()[0]!, payload).toString("base64url")}`;
}

export type LinkCheck =
  | { ok: true; linkId: string; referralId: string }
  | {
      ok: false;
      reason: "malformed" | "bad signature" | "expired" | "revoked" | "unknown";
      linkId?: string;
      referralId?: string;
    };

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

const B64URL = /^[A-Za-z0-9_-]+$/;

/**
 * Checks the signature first (constant time), then the expiry, then the link row. Only the
 * canonical spelling is accepted: the signature is compared as base64url text, not as decoded
 * bytes, since decoders accept "+" for "-", padding, stray characters and changed spare bits in
 * the last character, which would let several spellings of one link work.
 */
export async function verifyLink(
  token: string | undefined,
  now = new Date(),
  tx: Tx | typeof db = db,
): Promise<LinkCheck> {
  if (!token || token.length > 400) return { ok: false, reason: "malformed" };
  const [payload, signature, extra] = token.split(".");
  if (!payload || !signature || extra !== undefined || !B64URL.test(payload) || !/^[A-Za-z0-9_-]{43}$/.test(signature))
    return { ok: false, reason: "malformed" };
  const given = Buffer.from(signature, "utf8");
  const valid = keys().some((key) => {
    const expected = Buffer.from(mac(key, payload).toString("base64url"), "utf8");
    return given.length === expected.length && timingSafeEqual(given, expected);
  });
  if (!valid) return { ok: false, reason: "bad signature" };
  let claims: { l?: unknown; r?: unknown; e?: unknown };
  try {
    claims = JSON.parse(Buffer.from(payload, "base64url").toString("utf8"));
  } catch {
    return { ok: false, reason: "malformed" };
  }
  if (
    typeof claims.l !== "string" ||
    typeof claims.r !== "string" ||
    typeof claims.e !== "number" ||
    !UUID.test(claims.l) ||
    !UUID.test(claims.r)
  )
    return { ok: false, reason: "malformed" };
  const ids = { linkId: claims.l, referralId: claims.r };
  if (claims.e * 1000 <= now.getTime()) return { ok: false, reason: "expired", ...ids };
  const [row] = await tx.select().from(referralLinks).where(eq(referralLinks.id, claims.l)).limit(1);
  if (!row || row.referralId !== claims.r) return { ok: false, reason: "unknown", ...ids };
  if (row.revokedAt) return { ok: false, reason: "revoked", ...ids };
  if (row.expiresAt.getTime() <= now.getTime()) return { ok: false, reason: "expired", ...ids };
  return { ok: true, ...ids };
}

/** Revokes the referral's live links and issues a new one, in the caller's transaction. */
export async function issueLink(tx: Tx, referralId: string, now = new Date()) {
  await tx
    .update(referralLinks)
    .set({ revokedAt: now })
    .where(and(eq(referralLinks.referralId, referralId), isNull(referralLinks.revokedAt)));
  const [link] = await tx
    .insert(referralLinks)
    .values({ referralId, expiresAt: new Date(now.getTime() + LINK_TTL_DAYS * 86_400_000) })
    .returning();
  return link!;
}

export async function revokeLinks(tx: Tx, referralId: string, now = new Date()) {
  await tx
    .update(referralLinks)
    .set({ revokedAt: now })
    .where(and(eq(referralLinks.referralId, referralId), isNull(referralLinks.revokedAt)));
}
