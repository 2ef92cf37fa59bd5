import { desc, eq } from "drizzle-orm";
import { sessions } from "~/db/schema";
import { audit } from "~/utils/audit.server";
import { db } from "~/utils/db.server";
import { consumeUserToken } from "~/utils/tokens.server";

/** The browsers an account is signed in on, newest first. */
export async function accountSessions(userId: string) {
  return db
    .select({ id: sessions.id, createdAt: sessions.createdAt, userAgent: sessions.userAgent })
    .from(sessions)
    .where(eq(sessions.userId, userId))
    .orderBy(desc(sessions.createdAt));
}

/**
 * Uses up an e-mailed sign-in link's single-use token and audits the sign-in, in one transaction.
 * The token (with its account's id) when it was live, else null: expired or already used.
 */
export async function redeemSignInLink(rawToken: string, request: Request) {
  return db.transaction(async (tx) => {
    const token = await consumeUserToken(rawToken, tx, ["sign_in"]);
    if (token)
      await audit(
        { action: "auth.sign_in", actorUserId: token.userId, detail: { method: "e-mailed link" }, request },
        tx,
      );
    return token;
  });
}
