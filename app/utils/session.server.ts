import { requestMemo } from "./request-scope.server";
import { randomBytes } from "node:crypto";
import { and, eq, gt } from "drizzle-orm";
import { createCookie, redirect } from "react-router";
import { sessions, users, type Role } from "~/db/schema";
import { db } from "./db.server";
import { env } from "./env.server";
import { clientIp } from "./request.server";

export const SESSION_TTL_MS = 12 * 60 * 60 * 1000;

/** The cookie carries only a signed, random session id; the session itself lives in PostgreSQL. */
export const sessionCookie = createCookie("dioptra_session", {
  httpOnly: true,
  sameSite: "lax",
  secure: env.APP_URL.startsWith("https://"),
  path: "/",
  secrets: env.SESSION_SECRET.split(","),
  maxAge: SESSION_TTL_MS / 1000,
});

export type SessionUser = {
  id: string;
  email: string;
  name: string;
  role: Role;
  patientId: string | null;
  licenceNumber: string | null;
  sessionId: string;
};

export async function readSessionId(request: Request): Promise<string | null> {
  // A forged or tampered cookie fails signature checks and reads as null.
  const value = await sessionCookie.parse(request.headers.get("Cookie"));
  return typeof value === "string" && value.length > 20 ? value : null;
}

/**
 * The signed-in, active user of this request, or null (expired, revoked, deactivated, forged).
 * A page's loaders each ask; the session is read once per request and method (an action's later
 * loaders, which run as GET after the POST, read it afresh).
 */
export function getSessionUser(request: Request): Promise<SessionUser | null> {
  const key = `session-user ${request.method} ${request.headers.get("Cookie") ?? ""}`;
  return requestMemo(key, () => readSessionUser(request));
}

async function readSessionUser(request: Request): Promise<SessionUser | null> {
  const sessionId = await readSessionId(request);
  if (!sessionId) return null;
  const [row] = await db
    .select({
      id: users.id,
      email: users.email,
      name: users.name,
      role: users.role,
      patientId: users.patientId,
      licenceNumber: users.licenceNumber,
      sessionId: sessions.id,
    })
    .from(sessions)
    .innerJoin(users, eq(users.id, sessions.userId))
    .where(and(eq(sessions.id, sessionId), gt(sessions.expiresAt, new Date()), eq(users.active, true)))
    .limit(1);
  return row ?? null;
}

export async function createUserSession(request: Request, userId: string, redirectTo: string) {
  const id = randomBytes(32).toString("base64url");
  await db.insert(sessions).values({
    id,
    userId,
    expiresAt: new Date(Date.now() + SESSION_TTL_MS),
    userAgent: request.headers.get("user-agent")?.slice(0, 300) ?? null,
    ip: clientIp(request),
  });
  return redirect(redirectTo, { headers: { "Set-Cookie": await sessionCookie.serialize(id) } });
}

export async function destroySessionCookie() {
  return sessionCookie.serialize("", { maxAge: 0 });
}

/** Ends this session, or every session of the user ("sign out everywhere"). */
export async function endSessions(opts: { sessionId?: string; userId?: string }) {
  if (opts.userId) await db.delete(sessions).where(eq(sessions.userId, opts.userId));
  else if (opts.sessionId) await db.delete(sessions).where(eq(sessions.id, opts.sessionId));
}
