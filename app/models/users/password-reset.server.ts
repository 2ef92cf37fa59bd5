import { eq } from "drizzle-orm";
import { sessions, users } from "~/db/schema";
import { audit } from "~/utils/audit.server";
import { hashPassword } from "~/utils/auth.server";
import { db } from "~/utils/db.server";
import { clearAccountBudgets } from "~/utils/throttle.server";
import { consumeUserToken } from "~/utils/tokens.server";

/**
 * Sets an account's password with the single-use token of an e-mailed reset or invitation link,
 * ending every existing session of the account and auditing it in the same transaction. False
 * when the token has expired or was already used.
 */
export async function setPasswordWithToken(rawToken: string, password: string, request: Request): Promise<boolean> {
  const passwordHash = await hashPassword(password);
  const done = await db.transaction(async (tx) => {
    const token = await consumeUserToken(rawToken, tx);
    if (!token) return null;
    await tx.update(users).set({ passwordHash, updatedAt: new Date() }).where(eq(users.id, token.userId));
    // A new password ends every existing session of the account.
    await tx.delete(sessions).where(eq(sessions.userId, token.userId));
    await audit(
      {
        action: token.purpose === "invite" ? "auth.invite_accepted" : "auth.password_reset",
        actorUserId: token.userId,
        request,
      },
      tx,
    );
    const [user] = await tx.select({ email: users.email }).from(users).where(eq(users.id, token.userId));
    return { ...token, email: user!.email };
  });
  if (!done) return false;
  // The owner of the account proved it with the e-mailed link: failed sign-ins before no longer count.
  await clearAccountBudgets(done.email);
  return true;
}
