/**
 * Helpers for integration tests that call loaders and actions directly against the real
 * test database. Import app modules only from test files (after setup.ts has set the env).
 */
import { randomBytes } from "node:crypto";
import { sql } from "drizzle-orm";
import { RouterContextProvider } from "react-router";
import { users } from "~/db/schema";
import { db } from "~/utils/db.server";
import { createUserSession } from "~/utils/session.server";
import { UNIT } from "./ports";

export const DEMO_EMAIL = {
  owner: "owner@dioptra-demo.test",
  optometrist: "optometrist@dioptra-demo.test",
  receptionist: "reception@dioptra-demo.test",
  patient: "patient@dioptra-demo.test",
} as const;
export type DemoRole = keyof typeof DEMO_EMAIL;

export const BASE = "http://127.0.0.1:3000";

export async function userByEmail(email: string) {
  const [u] = await db
    .select()
    .from(users)
    .where(sql`lower(${users.email}) = ${email.toLowerCase()}`);
  if (!u) throw new Error(`no user ${email}`);
  return u;
}

/** A Cookie header for a fresh session of the user (as a real sign-in would create). */
export async function cookieFor(emailOrRole: string) {
  const email = emailOrRole in DEMO_EMAIL ? DEMO_EMAIL[emailOrRole as DemoRole] : emailOrRole;
  const user = await userByEmail(email);
  const res = await createUserSession(new Request(`${BASE}/login`), user.id, "/");
  const setCookie = res.headers.get("set-cookie")!;
  return setCookie.split(";")[0]!;
}

export function makeRequest(
  path: string,
  opts: {
    method?: string;
    cookie?: string;
    form?: Record<string, string>;
    json?: unknown;
    headers?: Record<string, string>;
  } = {},
) {
  const headers = new Headers(opts.headers);
  if (opts.cookie) headers.set("cookie", opts.cookie);
  let body: BodyInit | undefined;
  if (opts.form) {
    body = new URLSearchParams(opts.form);
    headers.set("content-type", "application/x-www-form-urlencoded");
  } else if (opts.json !== undefined) {
    body = JSON.stringify(opts.json);
    headers.set("content-type", "application/json");
  }
  return new Request(`${BASE}${path}`, { method: opts.method ?? (body ? "POST" : "GET"), headers, body });
}

/** Route-function arguments as React Router passes them. */
export function args(request: Request, params: Record<string, string> = {}) {
  return {
    request,
    params,
    context: new RouterContextProvider(),
    unstable_pattern: "",
    unstable_url: new URL(request.url),
  } as never;
}

/** Runs a loader/action and returns the thrown or returned Response, or the plain data. */
export async function run(
  fn: (a: never) => Promise<unknown>,
  request: Request,
  params: Record<string, string> = {},
): Promise<unknown> {
  try {
    return await fn(args(request, params));
  } catch (thrown) {
    return thrown;
  }
}

/** Status of a result: a Response, a React Router `data()` value, or plain data (200). */
export function statusOf(result: unknown): number {
  if (result instanceof Response) return result.status;
  if (
    result &&
    typeof result === "object" &&
    "type" in result &&
    (result as { type: string }).type === "DataWithResponseInit"
  ) {
    return (result as { init?: { status?: number } }).init?.status ?? 200;
  }
  return 200;
}

export function dataOf<T = unknown>(result: unknown): T {
  if (
    result &&
    typeof result === "object" &&
    "type" in result &&
    (result as { type: string }).type === "DataWithResponseInit"
  ) {
    return (result as unknown as { data: T }).data;
  }
  return result as T;
}

export const uniqueEmail = (prefix = "user") => `${prefix}-${randomBytes(4).toString("hex")}@example.test`;

/** The mail stand-in's messages to `to`, newest first. */
export async function mailTo(to: string, apiPort: number = UNIT.mailApi) {
  const res = await fetch(`http://127.0.0.1:${apiPort}/messages?to=${encodeURIComponent(to)}`);
  const list = (await res.json()) as { id: string; subject: string; attachments: { filename: string }[] }[];
  return Promise.all(
    list.map(
      async (m) =>
        (await (await fetch(`http://127.0.0.1:${apiPort}/messages/${m.id}`)).json()) as {
          id: string;
          subject: string;
          from: string;
          replyTo: string;
          headers: Record<string, string>;
          text: string;
          html: string;
          attachments: { index: number; filename: string; contentType: string }[];
        },
    ),
  );
}

export function linkIn(text: string, pathPrefix: string) {
  const match = text.match(new RegExp(`https?://[^\\s]+${pathPrefix.replace(/[/?]/g, "\\$&")}[^\\s]*`));
  if (!match) throw new Error(`no ${pathPrefix} link in: ${text}`);
  return new URL(match[0]);
}
