import { and, desc, eq, sql } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { action as loginAction } from "~/routes/auth/login";
import { action as forgotAction } from "~/routes/auth/forgot-password";
import { action as resetAction, loader as resetLoader } from "~/routes/auth/reset-password";
import { action as usersAction, loader as usersLoader } from "~/routes/settings/users";
import { loader as layoutLoader } from "~/routes/layout";
import { loader as accountLoader } from "~/routes/auth/account";
import { formatDate } from "~/lib/format";
import { auditLog, sessions, userTokens, users } from "~/db/schema";
import { deliverAccountMail } from "~/models/users/account-mail.server";
import { hashPassword } from "~/utils/auth.server";
import { db } from "~/utils/db.server";
import { getSessionUser } from "~/utils/session.server";
import {
  cookieFor,
  dataOf,
  linkIn,
  mailTo,
  makeRequest,
  run,
  statusOf,
  uniqueEmail,
  userByEmail,
} from "#tests/support/helpers";

async function newStaff(
  role: "owner" | "optometrist" | "receptionist" = "receptionist",
  password = "correct-horse-battery",
) {
  const email = uniqueEmail(role);
  const [u] = await db
    .insert(users)
    .values({ email, name: `Test ${role}`, role, passwordHash: await hashPassword(password) })
    .returning();
  return { ...u!, password };
}

const signIn = (email: string, password: string) =>
  run(loginAction, makeRequest("/login", { form: { email, password } }));

describe("sign-in", () => {
  it("signs in with the demo password and lands on the role's home, with a database session", async () => {
    const res = (await signIn("reception@dioptra-demo.test", "demo-password")) as Response;
    expect(res.status).toBe(302);
    expect(res.headers.get("location")).toBe("/");
    const cookie = res.headers.get("set-cookie")!;
    expect(cookie).toMatch(/HttpOnly/i);
    expect(cookie).toMatch(/SameSite=Lax/i);
    const user = await getSessionUser(makeRequest("/", { cookie: cookie.split(";")[0] }));
    expect(user?.role).toBe("receptionist");
  });

  it("sends the patient to the portal", async () => {
    const res = (await signIn("patient@dioptra-demo.test", "demo-password")) as Response;
    expect(res.headers.get("location")).toBe("/portal");
  });

  it("refuses a wrong password with a clear message and writes the failure to the audit log", async () => {
    const u = await newStaff();
    const res = await signIn(u.email, "not-the-password");
    expect(statusOf(res)).toBe(401);
    expect(JSON.stringify(dataOf(res))).toContain("do not match an active account");
    const [row] = await db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.action, "auth.sign_in_failed"), eq(auditLog.actorUserId, u.id)));
    expect(row?.detail).toMatchObject({ reason: "wrong password" });
  });

  it("answers malformed and empty fields with field errors, never a 500", async () => {
    for (const form of [
      {},
      { email: "", password: "" },
      { email: "not-an-email", password: "x" },
      { email: "a@b.test" },
    ]) {
      const res = await run(loginAction, makeRequest("/login", { form: form as Record<string, string> }));
      expect(statusOf(res)).toBe(400);
      const reply = dataOf<{ error: Record<string, string[]> }>(res);
      expect(Object.keys(reply.error).length).toBeGreaterThan(0);
    }
  });

  it("treats an unknown e-mail like a wrong password", async () => {
    const res = await signIn(uniqueEmail("nobody"), "whatever-password");
    expect(statusOf(res)).toBe(401);
  });

  it("throttles after five failures within the window, even with the right password", async () => {
    const u = await newStaff();
    for (let i = 0; i < 5; i++) expect(statusOf(await signIn(u.email, "wrong"))).toBe(401);
    const res = await signIn(u.email, u.password);
    expect(statusOf(res)).toBe(429);
    expect(JSON.stringify(dataOf(res))).toMatch(/Too many failed sign-in attempts/);
  });

  it("ignores a forged session cookie", async () => {
    const user = await getSessionUser(makeRequest("/", { cookie: "dioptra_session=forged-value.signature" }));
    expect(user).toBeNull();
    const res = await run(layoutLoader, makeRequest("/", { cookie: "dioptra_session=forged-value.signature" }));
    expect(statusOf(res)).toBe(302);
    expect((res as Response).headers.get("location")).toMatch(/^\/login/);
  });

  it("ignores an expired session", async () => {
    const cookie = await cookieFor("optometrist");
    const user = await getSessionUser(makeRequest("/", { cookie }));
    await db
      .update(sessions)
      .set({ expiresAt: new Date(Date.now() - 1000) })
      .where(eq(sessions.id, user!.sessionId));
    expect(await getSessionUser(makeRequest("/", { cookie }))).toBeNull();
  });
});

describe("roles", () => {
  it("gives a receptionist a 403 on owner-only settings", async () => {
    const res = await run(usersLoader, makeRequest("/settings/users", { cookie: await cookieFor("receptionist") }));
    expect(statusOf(res)).toBe(403);
  });

  it("refuses a receptionist's POST to an owner action and writes nothing", async () => {
    const email = uniqueEmail("invitee");
    const res = await run(
      usersAction,
      makeRequest("/settings/users", {
        cookie: await cookieFor("receptionist"),
        form: { intent: "invite", name: "Sneaky", email, role: "owner" },
      }),
    );
    expect(statusOf(res)).toBe(403);
    expect(await db.select().from(users).where(eq(users.email, email))).toHaveLength(0);
  });

  it("lets the owner invite a colleague, who sets a password from the e-mailed link", async () => {
    const email = uniqueEmail("invitee");
    const res = await run(
      usersAction,
      makeRequest("/settings/users", {
        cookie: await cookieFor("owner"),
        form: { intent: "invite", name: "Nia Farrow", email, role: "optometrist", licenceNumber: "01-40001" },
      }),
    );
    expect(statusOf(res)).toBe(302);
    const [mail] = await mailTo(email);
    expect(mail?.subject).toMatch(/invited/);
    const link = linkIn(mail!.text, "/reset-password?token=");
    const token = link.searchParams.get("token")!;
    const page = (await run(resetLoader, makeRequest(`/reset-password?token=${token}`))) as {
      valid: boolean;
      purpose: string;
    };
    expect(page).toMatchObject({ valid: true, purpose: "invite" });
    const saved = await run(
      resetAction,
      makeRequest("/reset-password", {
        form: { token, password: "a-long-new-password", confirm: "a-long-new-password" },
      }),
    );
    expect(statusOf(saved)).toBe(302);
    expect(statusOf(await signIn(email, "a-long-new-password"))).toBe(302);
  });

  it("records a role change in the audit log and ends the user's sessions", async () => {
    const u = await newStaff("receptionist");
    const cookie = await cookieFor(u.email);
    const res = await run(
      usersAction,
      makeRequest("/settings/users", {
        cookie: await cookieFor("owner"),
        form: { intent: "role", userId: u.id, role: "optometrist" },
      }),
    );
    expect(statusOf(res)).toBe(302);
    expect((await userByEmail(u.email)).role).toBe("optometrist");
    expect(await getSessionUser(makeRequest("/", { cookie }))).toBeNull();
    const [row] = await db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.action, "user.role_changed"), eq(auditLog.entityId, u.id)));
    expect(row?.detail).toMatchObject({ from: "receptionist", to: "optometrist" });
  });

  it("ends a deactivated user's sessions at once and refuses their sign-in", async () => {
    const u = await newStaff("optometrist");
    const cookie = await cookieFor(u.email);
    expect(await getSessionUser(makeRequest("/", { cookie }))).not.toBeNull();
    const res = await run(
      usersAction,
      makeRequest("/settings/users", {
        cookie: await cookieFor("owner"),
        form: { intent: "deactivate", userId: u.id },
      }),
    );
    expect(statusOf(res)).toBe(302);
    expect(await getSessionUser(makeRequest("/", { cookie }))).toBeNull();
    expect(await db.select().from(sessions).where(eq(sessions.userId, u.id))).toHaveLength(0);
    expect(statusOf(await signIn(u.email, u.password))).toBe(401);
  });

  it("will not deactivate the last owner or the owner's own account", async () => {
    const owner = await userByEmail("owner@dioptra-demo.test");
    const res = await run(
      usersAction,
      makeRequest("/settings/users", {
        cookie: await cookieFor("owner"),
        form: { intent: "deactivate", userId: owner.id },
      }),
    );
    expect(statusOf(res)).toBe(409);
    expect((await userByEmail(owner.email)).active).toBe(true);
  });

  it("answers an invite with bad fields with field errors", async () => {
    const res = await run(
      usersAction,
      makeRequest("/settings/users", {
        cookie: await cookieFor("owner"),
        form: { intent: "invite", name: "", email: "nope", role: "king" },
      }),
    );
    expect(statusOf(res)).toBe(400);
    expect(Object.keys(dataOf<{ error: Record<string, unknown> }>(res).error).sort()).toEqual([
      "email",
      "name",
      "role",
    ]);
  });
});

describe("password reset", () => {
  async function requestReset(email: string) {
    await run(forgotAction, makeRequest("/forgot-password", { form: { email } }));
    // The page queues the e-mail; the worker sends it.
    await deliverAccountMail({ kind: "reset", email, ip: null });
    const [mail] = await mailTo(email);
    return linkIn(mail!.text, "/reset-password?token=").searchParams.get("token")!;
  }

  it("resets with a single-use token and ends old sessions", async () => {
    const u = await newStaff();
    const oldCookie = await cookieFor(u.email);
    const token = await requestReset(u.email);
    const ok = await run(
      resetAction,
      makeRequest("/reset-password", {
        form: { token, password: "brand-new-password", confirm: "brand-new-password" },
      }),
    );
    expect(statusOf(ok)).toBe(302);
    expect(await getSessionUser(makeRequest("/", { cookie: oldCookie }))).toBeNull();
    expect(statusOf(await signIn(u.email, "brand-new-password"))).toBe(302);
    // Reused token
    const again = await run(
      resetAction,
      makeRequest("/reset-password", {
        form: { token, password: "another-password-1", confirm: "another-password-1" },
      }),
    );
    expect(statusOf(again)).toBe(400);
    expect(JSON.stringify(dataOf(again))).toMatch(/expired or has already been used/);
    expect(statusOf(await signIn(u.email, "brand-new-password"))).toBe(302);
  });

  it("refuses an expired token and leaves the password unchanged", async () => {
    const u = await newStaff();
    const token = await requestReset(u.email);
    await db
      .update(userTokens)
      .set({ expiresAt: new Date(Date.now() - 1000) })
      .where(eq(userTokens.userId, u.id));
    const res = await run(
      resetAction,
      makeRequest("/reset-password", {
        form: { token, password: "brand-new-password", confirm: "brand-new-password" },
      }),
    );
    expect(statusOf(res)).toBe(400);
    expect(statusOf(await signIn(u.email, u.password))).toBe(302);
  });

  it("answers the same for an unknown address and sends nothing", async () => {
    const email = uniqueEmail("ghost");
    const res = await run(forgotAction, makeRequest("/forgot-password", { form: { email } }));
    expect(dataOf<{ sent: boolean }>(res).sent).toBe(true);
    await deliverAccountMail({ kind: "reset", email, ip: null });
    expect(await mailTo(email)).toHaveLength(0);
  });

  it("asks for matching passwords of a usable length", async () => {
    const res = await run(
      resetAction,
      makeRequest("/reset-password", { form: { token: "x", password: "short", confirm: "different" } }),
    );
    expect(statusOf(res)).toBe(400);
    const errors = dataOf<{ error: Record<string, string[]> }>(res).error;
    expect(errors.password?.[0]).toMatch(/at least 10/);
  });
});

describe("audit", () => {
  it("records successful sign-ins", async () => {
    const u = await newStaff();
    await signIn(u.email, u.password);
    const rows = await db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.actorUserId, u.id), eq(auditLog.action, "auth.sign_in")))
      .orderBy(desc(auditLog.at));
    expect(rows.length).toBe(1);
  });
});

describe("account page", () => {
  it("lists the account's sessions with when each began on the practice's wall clock", async () => {
    const cookie = await cookieFor("optometrist");
    const d = dataOf<{ sessions: { key: string; current: boolean; since: string }[] }>(
      await run(accountLoader, makeRequest("/account", { cookie })),
    );
    const current = d.sessions.find((s) => s.current);
    expect(current).toBeTruthy();
    const [row] = await db
      .select({ createdAt: sessions.createdAt })
      .from(sessions)
      .where(sql`${sessions.id} like ${`${current!.key}%`}`);
    // The demo practice is in London: the time is written in Europe/London, not the server's zone.
    expect(current!.since).toBe(formatDate(row!.createdAt, { timeZone: "Europe/London", time: true }));
    expect(current!.since).toMatch(/^\d{1,2} [A-Z][a-z]{2} \d{4}, \d{2}:\d{2}$/);
  });
});
