import { createHash, randomBytes } from "node:crypto";
import { and, eq, gt, inArray, isNull } from "drizzle-orm";
import { userTokens, users } from "~/db/schema";
import { db, type Tx } from "./db.server";

export type TokenPurpose = "reset" | "invite" | "sign_in";
export const TOKEN_TTL_MS: Record<TokenPurpose, number> = {
  reset: 60 * 60 * 1000,
  invite: 7 * 24 * 60 * 60 * 1000,
  sign_in: 15 * 60 * 1000,
};

const hash = (raw: string) => createHash("sha256").update(raw).digest("hex");

/** Issues a single-use token; only its hash is stored. Earlier unused tokens of the same purpose are withdrawn. */
export async function issueUserToken(userId: string, purpose: TokenPurpose, tx: Tx | typeof db = db) {
  const raw = randomBytes(32).toString("base64url");
  await tx
    .update(userTokens)
    .set({ usedAt: new Date() })
    .where(and(eq(userTokens.userId, userId), eq(userTokens.purpose, purpose), isNull(userTokens.usedAt)));
  await tx
    .insert(userTokens)
    .values({ userId, purpose, tokenHash: hash(raw), expiresAt: new Date(Date.now() + TOKEN_TTL_MS[purpose]) });
  return raw;
}

/** The live token's user without using it up (to show the form), or null. */
export async function peekUserToken(raw: string, purposes: TokenPurpose[] = ["reset", "invite"]) {
  if (!raw || raw.length > 100) return null;
  const [row] = await db
    .select({ userId: userTokens.userId, purpose: userTokens.purpose, email: users.email, name: users.name })
    .from(userTokens)
    .innerJoin(users, eq(users.id, userTokens.userId))
    .where(
      and(
        eq(userTokens.tokenHash, hash(raw)),
        isNull(userTokens.usedAt),
        gt(userTokens.expiresAt, new Date()),
        inArray(userTokens.purpose, purposes),
      ),
    )
    .limit(1);
  return row ?? null;
}

/** Uses the token up inside `tx`; null when unknown, used, expired or of another purpose. Row-locked so it is used once. */
export async function consumeUserToken(raw: string, tx: Tx, purposes: TokenPurpose[] = ["reset", "invite"]) {
  if (!raw || raw.length > 100) return null;
  const [row] = await tx
    .select({ id: userTokens.id, userId: userTokens.userId, purpose: userTokens.purpose })
    .from(userTokens)
    .where(
      and(
        eq(userTokens.tokenHash, hash(raw)),
        isNull(userTokens.usedAt),
        gt(userTokens.expiresAt, new Date()),
        inArray(userTokens.purpose, purposes),
      ),
    )
    .for("update")
    .limit(1);
  if (!row) return null;
  await tx.update(userTokens).set({ usedAt: new Date() }).where(eq(userTokens.id, row.id));
  return row;
}
