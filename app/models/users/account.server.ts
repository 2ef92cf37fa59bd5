import { desc, eq } from "drizzle-orm";
import { practiceSettings, sessions } from "~/db/schema";
import { formatDate } from "~/lib/format";
import { audit } from "~/utils/audit.server";
import { db } from "~/utils/db.server";
import { consumeUserToken } from "~/utils/tokens.server";

/** The browsers an account is signed in on, newest first. */
export async function accountSessions(userId: string) {
  const [rows, [settings]] = await Promise.all([
    db
      .select({ id: sessions.id, createdAt: sessions.createdAt, userAgent: sessions.userAgent })
      .from(sessions)
      .where(eq(sessions.userId, userId))
      .orderBy(desc(sessions.createdAt)),
    db.select({ timeZone: practiceSettings.timeZone }).from(practiceSettings).where(eq(practiceSettings.id, 1)),
  ]);
  // When each began, on the practice's wall clock ("3 Dec 2026, 09:41").
  const timeZone = settings?.timeZone ?? "Europe/London";
  return rows.map((r) => ({ ...r, since: formatDate(r.createdAt, { timeZone, time: true }) }));
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
