/**
 * Password-reset and sign-in-link e-mails. The page that asks for one does the same work whether
 * or not the address has an account — checks the address's and the client's budgets and queues
 * one job — so neither its answer nor its timing tells accounts apart. The worker looks the
 * address up, issues the token and sends the e-mail (or, for an address without an account or
 * a staff address asking for a patient link, sends nothing).
 */
import { sql } from "drizzle-orm";
import { users } from "~/db/schema";
import { audit } from "~/utils/audit.server";
import { db } from "~/utils/db.server";
import { defineJob } from "~/utils/jobs.server";
import { absoluteUrl, sendMail } from "~/utils/mail.server";
import { clientKey } from "~/utils/request.server";
import { takeAttempt, waitText } from "~/utils/throttle.server";
import { issueUserToken } from "~/utils/tokens.server";

export type AccountMailKind = "reset" | "sign_in";
export const ACCOUNT_MAIL_QUEUE = "account-mail";

/** Sends the e-mail a queued request asked for; nothing when the address has no matching account. */
export async function deliverAccountMail(data: { kind: AccountMailKind; email: string; ip: string | null }) {
  const [user] = await db
    .select({ id: users.id, name: users.name, email: users.email, role: users.role, active: users.active })
    .from(users)
    .where(sql`lower(${users.email}) = ${data.email}`)
    .limit(1);
  if (!user?.active) return;
  if (data.kind === "reset") {
    const token = await issueUserToken(user.id, "reset");
    await sendMail({
      to: user.email,
      subject: "Reset your Dioptra password",
      text: `Hello ${user.name},\n\nSomeone asked to reset the password of your Dioptra account. If it was you, open this link within one hour to choose a new password:\n\n${absoluteUrl(`/reset-password?token=${token}`)}\n\nThe link works once. If you did not ask for this, ignore this e-mail: your password stays as it is.\n`,
    });
    await audit({ action: "auth.reset_requested", actorUserId: user.id, detail: { ip: data.ip } });
  } else {
    if (user.role !== "patient") return;
    const token = await issueUserToken(user.id, "sign_in");
    await sendMail({
      to: user.email,
      subject: "Your sign-in link",
      text: `Hello ${user.name},\n\nOpen this link within 15 minutes to sign in to your page at the practice:\n\n${absoluteUrl(`/sign-in-link/verify?token=${token}`)}\n\nThe link works once. If you did not ask for it, ignore this e-mail.\n`,
    });
    await audit({ action: "auth.sign_in_link_sent", actorUserId: user.id, detail: { ip: data.ip } });
  }
}

export const accountMail = defineJob<{ kind: AccountMailKind; email: string; ip: string | null }>(
  ACCOUNT_MAIL_QUEUE,
  (data) => deliverAccountMail(data),
  {
    retryLimit: 3,
    retryDelay: 30,
    retryBackoff: true,
  },
);

export type AccountMailRequest = { ok: true } | { ok: false; status: 429; message: string; retryAfterSeconds: number };

/**
 * What the forgot-password and sign-in-link pages do with a valid address: the client's budget
 * (10 requests, then one every 6 minutes) and the address's (3 e-mails, then one every 20
 * minutes) are checked for every address alike, then the e-mail is queued.
 */
export async function requestAccountMail(
  kind: AccountMailKind,
  email: string,
  request: Request,
): Promise<AccountMailRequest> {
  const byClient = await takeAttempt("mail-client", { address: clientKey(request) });
  if (!byClient.granted) {
    return {
      ok: false,
      status: 429,
      retryAfterSeconds: byClient.retryAfterSeconds,
      message: `Too many requests from your connection. Try again in ${waitText(byClient.retryAfterSeconds)}.`,
    };
  }
  const byAddress = await takeAttempt("mail-address", { account: email });
  if (!byAddress.granted) {
    return {
      ok: false,
      status: 429,
      retryAfterSeconds: byAddress.retryAfterSeconds,
      message: `Several e-mails have already been asked for this address. Check your inbox (and spam folder), or try again in ${waitText(byAddress.retryAfterSeconds)}.`,
    };
  }
  await accountMail.enqueue({ kind, email, ip: clientKey(request) === "unknown" ? null : clientKey(request) });
  return { ok: true };
}
