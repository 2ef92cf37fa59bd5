import bcrypt from "bcryptjs";
import { and, count, eq, gt, sql } from "drizzle-orm";
import { data, redirect } from "react-router";
import { Authenticator } from "remix-auth";
import { FormStrategy } from "remix-auth-form";
import { signInAttempts, users, type Role } from "~/db/schema";
import { signInSchema } from "./auth-schemas";
import { audit } from "./audit.server";
import { db } from "./db.server";
import { env } from "./env.server";
import { clientIp } from "./request.server";
import { getSessionUser, type SessionUser } from "./session.server";

/** Raised for a sign-in that must be refused; the message is shown to the user as is. */
export class SignInError extends Error {
  constructor(
    message: string,
    readonly status: 400 | 401 | 429 = 401,
  ) {
    super(message);
  }
}

export const BCRYPT_COST = 10;
export const hashPassword = (password: string) => bcrypt.hash(password, BCRYPT_COST);

// A fixed hash compared against when the e-mail is unknown, so timing does not reveal which accounts exist.
const DUMMY_HASH = bcrypt.hashSync("not-a-real-password", BCRYPT_COST);

export type AuthUser = { id: string; role: Role };

async function recentFailures(email: string) {
  const since = new Date(Date.now() - env.SIGN_IN_WINDOW_MINUTES * 60_000);
  const [row] = await db
    .select({ n: count() })
    .from(signInAttempts)
    .where(and(sql`lower(${signInAttempts.email}) = ${email}`, eq(signInAttempts.succeeded, false), gt(signInAttempts.at, since)));
  return row?.n ?? 0;
}

export async function verifySignIn(email: string, password: string, request: Request): Promise<AuthUser> {
  const ip = clientIp(request);
  if ((await recentFailures(email)) >= env.SIGN_IN_MAX_FAILURES) {
    await audit({ action: "auth.sign_in_throttled", detail: { email }, request });
    throw new SignInError(
      `Too many failed sign-in attempts for this account. Wait ${env.SIGN_IN_WINDOW_MINUTES} minutes and try again, or reset your password.`,
      429,
    );
  }
  const [user] = await db
    .select({ id: users.id, role: users.role, passwordHash: users.passwordHash, active: users.active })
    .from(users)
    .where(sql`lower(${users.email}) = ${email}`)
    .limit(1);
  const ok = await bcrypt.compare(password, user?.passwordHash ?? DUMMY_HASH);
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
  await audit({ action: "auth.sign_in", actorUserId: user.id, request });
  return { id: user.id, role: user.role };
}

export const authenticator = new Authenticator<AuthUser>();
authenticator.use(
  new FormStrategy(async ({ form, request }) => {
    const parsed = signInSchema.safeParse(Object.fromEntries(form));
    if (!parsed.success) throw new SignInError(parsed.error.issues[0]?.message ?? "Check the form.", 400);
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
export async function requireRole<R extends Role>(request: Request, roles: readonly R[]): Promise<SessionUser & { role: R }> {
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
  if (user.role === "patient" && user.patientId !== patientId) {
    throw data({ error: "Not found." }, { status: 404 });
  }
}
export { signInSchema };
