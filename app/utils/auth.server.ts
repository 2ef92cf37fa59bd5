import bcrypt from "bcryptjs";
import { and, count, eq, gt, sql } from "drizzle-orm";
import { data, redirect } from "react-router";
import { Authenticator } from "remix-auth";
import { FormStrategy } from "remix-auth-form";
import { signInAttempts, users, type Role } from "~/db/schema";
import { signInSchema } from "./auth-schemas";
import { audit } from "./audit.server";
import { db } from "./db.server";
import { DomainError, notFound, type DomainErrorOptions } from "./failure.server";
import { clientIp, clientKey } from "./request.server";
import { clearAccountBudgets, refundAttempt, takeAttempt, waitText } from "./throttle.server";
import { compareInPool, HashingBusyError, hashInPool } from "./password-hashing.server";
import { getSessionUser, type SessionUser } from "./session.server";

/** Raised for a sign-in that must be refused; the message is shown to the user as is. */
export class SignInError extends DomainError {
  /** Seconds until another attempt may succeed (the Retry-After header), for throttled or busy refusals. */
  readonly retryAfterSeconds?: number;

  constructor(message: string, options: DomainErrorOptions & { retryAfterSeconds?: number } = {}) {
    super(message, { status: 401, ...options });
    this.retryAfterSeconds = options.retryAfterSeconds;
  }
}

export const BCRYPT_COST = 10;
export const hashPassword = (password: string) => hashInPool(password, BCRYPT_COST);

// A fixed hash compared against when the e-mail is unknown, so timing does not reveal which accounts exist.
const DUMMY_HASH = bcrypt.hashSync("not-a-real-password", BCRYPT_COST);

/**
 * Sign-ins in progress in this process: at most MAX_SIGNING_IN run at once (each takes a few
 * database round trips and a password check), at most MAX_SIGN_IN_QUEUE wait; past that a
 * sign-in is refused at once with 503, before it touches the database. A flood of sign-ins
 * therefore never holds the whole connection pool, and other pages stay responsive. The count
 * lives in memory and is safe to lose: it only gates work in flight in this process; the
 * attempt budgets themselves are in PostgreSQL.
 */
const MAX_SIGNING_IN = 4;
const MAX_SIGN_IN_QUEUE = 16;
let signingIn = 0;
const signInQueue: (() => void)[] = [];

async function withSignInSlot<T>(work: () => Promise<T>): Promise<T> {
  if (signingIn >= MAX_SIGNING_IN) {
    if (signInQueue.length >= MAX_SIGN_IN_QUEUE)
      throw new SignInError("The server is busy signing people in. Try again in a few seconds.", {
        status: 503,
        retryAfterSeconds: 5,
      });
    await new Promise<void>((resolve) => signInQueue.push(resolve));
  } else {
    signingIn++;
  }
  try {
    return await work();
  } finally {
    const following = signInQueue.shift();
    if (following) following();
    else signingIn--;
  }
}

export type AuthUser = { id: string; role: Role };

/** Whether this account signed in successfully from this address in the last 90 days. */
async function signedInBefore(email: string, ip: string) {
  const since = new Date(Date.now() - 90 * 24 * 60 * 60_000);
  const [row] = await db
    .select({ n: count() })
    .from(signInAttempts)
    .where(
      and(
        sql`lower(${signInAttempts.email}) = ${email}`,
        eq(signInAttempts.succeeded, true),
        eq(signInAttempts.ip, ip),
        gt(signInAttempts.at, since),
      ),
    );
  return (row?.n ?? 0) > 0;
}

/**
 * Checks a sign-in against three attempt budgets (see throttle.server.ts), each taken before the
 * password is hashed so concurrent attempts are counted atomically:
 *  - the client address's budget, whatever the account — a flood from one address is refused
 *    before any hashing;
 *  - the account's budget from this address — five tries, then one every three minutes;
 *  - the account's budget from everywhere — skipped for an address that signed in to the account
 *    before, so strangers elsewhere can slow an account down but never keep its owner out.
 * A successful sign-in gives the attempts back; a password reset clears the account's budgets.
 */
export function verifySignIn(email: string, password: string, request: Request): Promise<AuthUser> {
  return withSignInSlot(() => checkSignIn(email, password, request));
}

async function checkSignIn(email: string, password: string, request: Request): Promise<AuthUser> {
  const ip = clientIp(request);
  const address = clientKey(request);
  const byAddress = await takeAttempt("signin-address", { address });
  if (!byAddress.granted) {
    await audit({ action: "auth.sign_in_throttled", detail: { email, budget: "address" }, request });
    throw new SignInError(
      `Too many failed sign-in attempts from your connection. Try again in ${waitText(byAddress.retryAfterSeconds)}.`,
      { status: 429, retryAfterSeconds: byAddress.retryAfterSeconds },
    );
  }
  const accountRefusal = (retryAfterSeconds: number) =>
    new SignInError(
      `Too many failed sign-in attempts for this account. Try again in ${waitText(retryAfterSeconds)}, or reset your password.`,
      { status: 429, retryAfterSeconds },
    );
  const byPair = await takeAttempt("signin-pair", { account: email, address });
  if (!byPair.granted) {
    await audit({ action: "auth.sign_in_throttled", detail: { email, budget: "account and address" }, request });
    throw accountRefusal(byPair.retryAfterSeconds);
  }
  if (!(ip && (await signedInBefore(email, ip)))) {
    const byAccount = await takeAttempt("signin-account", { account: email });
    if (!byAccount.granted) {
      await audit({ action: "auth.sign_in_throttled", detail: { email, budget: "account" }, request });
      throw accountRefusal(byAccount.retryAfterSeconds);
    }
  }
  const [user] = await db
    .select({ id: users.id, role: users.role, passwordHash: users.passwordHash, active: users.active })
    .from(users)
    .where(sql`lower(${users.email}) = ${email}`)
    .limit(1);
  let ok: boolean;
  try {
    ok = await compareInPool(password, user?.passwordHash ?? DUMMY_HASH);
  } catch (error) {
    if (!(error instanceof HashingBusyError)) throw error;
    // Not the user's fault: give the attempts back.
    await refundAttempt("signin-address", { address });
    await refundAttempt("signin-pair", { account: email, address });
    throw new SignInError("The server is busy signing people in. Try again in a few seconds.", {
      status: 503,
      retryAfterSeconds: 5,
    });
  }
  if (!user || !ok || !user.passwordHash || !user.active) {
    await db.insert(signInAttempts).values({ email, ip, succeeded: false });
    await audit({
      action: "auth.sign_in_failed",
      actorUserId: user?.id ?? null,
      detail: { email, reason: !user ? "unknown e-mail" : !user.active ? "deactivated" : "wrong password" },
      request,
    });
    throw new SignInError("That e-mail and password do not match an active account.");
  }
  await db.insert(signInAttempts).values({ email, ip, succeeded: true });
  await refundAttempt("signin-address", { address });
  await clearAccountBudgets(email, address);
  await audit({ action: "auth.sign_in", actorUserId: user.id, request });
  return { id: user.id, role: user.role };
}

export const authenticator = new Authenticator<AuthUser>();
authenticator.use(
  new FormStrategy(async ({ form, request }) => {
    const parsed = signInSchema.safeParse(Object.fromEntries(form));
    if (!parsed.success) throw new SignInError(parsed.error.issues[0]?.message ?? "Check the form.", { status: 400 });
    return verifySignIn(parsed.data.email, parsed.data.password, request);
  }),
  "form",
);

/** Where each role starts after signing in. */
export function homeFor(role: Role) {
  return role === "patient" ? "/portal" : "/";
}

export const STAFF_ROLES = ["owner", "optometrist", "receptionist"] as const satisfies Role[];
export const CLINICAL_ROLES = ["owner", "optometrist"] as const satisfies Role[];

function safeRedirectPath(request: Request) {
  const url = new URL(request.url);
  return `${url.pathname}${url.search}`;
}

/** The signed-in user, or a redirect to /login (pages) / a 401 (API and resource routes). */
export async function requireUser(request: Request): Promise<SessionUser> {
  const user = await getSessionUser(request);
  if (user) return user;
  const url = new URL(request.url);
  if (url.pathname.startsWith("/api/") || request.headers.get("accept")?.includes("application/json")) {
    throw data({ error: "Sign in first." }, { status: 401 });
  }
  throw redirect(`/login?redirectTo=${encodeURIComponent(safeRedirectPath(request))}`);
}

/** The signed-in user if their role is one of `roles`; otherwise the 403 page. */
export async function requireRole<R extends Role>(
  request: Request,
  roles: readonly R[],
): Promise<SessionUser & { role: R }> {
  const user = await requireUser(request);
  if (!(roles as readonly Role[]).includes(user.role)) {
    throw data({ error: "Your role does not give access to this page." }, { status: 403 });
  }
  return user as SessionUser & { role: R };
}

/**
 * The guard for any row that belongs to a patient: staff may reach it (role checks are the
 * caller's), a patient only their own record. Another patient's id answers 404, never 403,
 * so ids cannot be probed.
 */
export function assertPatientAccess(user: SessionUser, patientId: string) {
  if (user.role === "patient" && user.patientId !== patientId) notFound();
}
export { signInSchema };
