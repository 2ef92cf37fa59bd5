/**
 * Sign-in and account e-mail throttling against the real database: budgets per client address,
 * per account and address, and per account, counted atomically in PostgreSQL; slowing down
 * rather than locking; a password reset clearing the account's budgets; reset and sign-in-link
 * pages doing the same work for known and unknown addresses.
 */
import { randomBytes } from "node:crypto";
import { and, eq, sql } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { action as forgotAction } from "~/routes/auth/forgot-password";
import { action as loginAction } from "~/routes/auth/login";
import { action as resetAction } from "~/routes/auth/reset-password";
import { action as linkAction } from "~/routes/auth/sign-in-link";
import { attemptBudgets, auditLog, signInAttempts, users } from "~/db/schema";
import { deliverAccountMail } from "~/models/users/account-mail.server";
import { hashPassword } from "~/utils/auth.server";
import { db } from "~/utils/db.server";
import { issueUserToken } from "~/utils/tokens.server";
import { dataOf, mailTo, makeRequest, run, statusOf, uniqueEmail } from "#tests/support/helpers";

/** A private-range client address (RFC 1918), random per call so tests do not share budgets. */
const newAddress = () => `10.${[...randomBytes(3)].join(".")}`;

async function newStaff(password = "correct-horse-battery") {
  const email = uniqueEmail("throttle");
  const [u] = await db
    .insert(users)
    .values({ email, name: "Test Owner", role: "owner", passwordHash: await hashPassword(password) })
    .returning();
  return { ...u!, password };
}

const signIn = (email: string, password: string, address: string) =>
  run(loginAction, makeRequest("/login", { form: { email, password }, headers: { "x-forwarded-for": address } }));

/** Pretends `seconds` have passed for the account's budgets (the buckets refill with time). */
async function age(email: string, seconds: number) {
  await db
    .update(attemptBudgets)
    .set({ updatedAt: sql`${attemptBudgets.updatedAt} - make_interval(secs => ${seconds})` })
    .where(eq(attemptBudgets.account, email));
}

describe("sign-in throttling", () => {
  it("slows one address down after five failures on an account; the owner elsewhere still signs in", async () => {
    const owner = await newStaff();
    const stranger = newAddress();
    const home = newAddress();
    for (let i = 0; i < 5; i++) expect(statusOf(await signIn(owner.email, `guess-${i}`, stranger))).toBe(401);
    const refused = await signIn(owner.email, "guess-again", stranger);
    expect(statusOf(refused)).toBe(429);
    expect(JSON.stringify(dataOf(refused))).toMatch(
      /Too many failed sign-in attempts for this account\. Try again in \d+ (seconds|minutes)/,
    );
    expect(
      Number((refused as { init: { headers: Record<string, string> } }).init.headers["retry-after"]),
    ).toBeLessThanOrEqual(180);
    // The owner, at another address, is not affected by the stranger's guesses.
    expect(statusOf(await signIn(owner.email, owner.password, home))).toBe(302);
  });

  it("slows down rather than locks: one more try per refill period", async () => {
    const owner = await newStaff();
    const address = newAddress();
    for (let i = 0; i < 5; i++) await signIn(owner.email, `guess-${i}`, address);
    expect(statusOf(await signIn(owner.email, owner.password, address))).toBe(429);
    await age(owner.email, 181);
    expect(statusOf(await signIn(owner.email, owner.password, address))).toBe(302);
  });

  it("never lets strangers from many addresses keep the owner out of an address they signed in from before", async () => {
    const owner = await newStaff();
    const home = newAddress();
    expect(statusOf(await signIn(owner.email, owner.password, home))).toBe(302);
    // 40 failures from 10 addresses empty the account-wide budget (20).
    for (let a = 0; a < 10; a++) {
      const address = newAddress();
      for (let i = 0; i < 4; i++) await signIn(owner.email, `guess-${a}-${i}`, address);
    }
    expect(statusOf(await signIn(owner.email, owner.password, newAddress()))).toBe(429);
    expect(statusOf(await signIn(owner.email, owner.password, home))).toBe(302);
  });

  it("clears the account's budgets after a successful password reset", async () => {
    const owner = await newStaff();
    const address = newAddress();
    for (let i = 0; i < 5; i++) await signIn(owner.email, `guess-${i}`, address);
    expect(statusOf(await signIn(owner.email, owner.password, address))).toBe(429);
    const token = await issueUserToken(owner.id, "reset");
    const reset = await run(
      resetAction,
      makeRequest("/reset-password", { form: { token, password: "a-new-password-1", confirm: "a-new-password-1" } }),
    );
    expect(statusOf(reset)).toBe(302);
    expect(await db.select().from(attemptBudgets).where(eq(attemptBudgets.account, owner.email))).toHaveLength(0);
    expect(statusOf(await signIn(owner.email, "a-new-password-1", address))).toBe(302);
  });

  it("counts concurrent attempts atomically: 12 at once on a budget of 5 check the password 5 times", async () => {
    const owner = await newStaff();
    const address = newAddress();
    const results = await Promise.all(Array.from({ length: 12 }, (_, i) => signIn(owner.email, `guess-${i}`, address)));
    const statuses = results.map(statusOf).sort();
    expect(statuses.filter((s) => s === 401)).toHaveLength(5);
    expect(statuses.filter((s) => s === 429)).toHaveLength(7);
    const checked = await db.select().from(signInAttempts).where(eq(signInAttempts.email, owner.email));
    expect(checked).toHaveLength(5);
  });

  it("refuses a flood from one address before any password is checked", async () => {
    const address = newAddress();
    for (let i = 0; i < 30; i++) expect(statusOf(await signIn(uniqueEmail("flood"), "whatever-1", address))).toBe(401);
    const email = uniqueEmail("flood");
    const refused = await signIn(email, "whatever-1", address);
    expect(statusOf(refused)).toBe(429);
    expect(JSON.stringify(dataOf(refused))).toMatch(/from your connection/);
    // No password check was made: no attempt row, and the refusal is in the audit log.
    expect(await db.select().from(signInAttempts).where(eq(signInAttempts.email, email))).toHaveLength(0);
    const throttled = await db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.action, "auth.sign_in_throttled"), sql`${auditLog.detail}->>'email' = ${email}`));
    expect(throttled[0]?.detail).toMatchObject({ budget: "address" });
    // Another address is not affected.
    expect(statusOf(await signIn(uniqueEmail("flood"), "whatever-1", newAddress()))).toBe(401);
  });

  it("answers a burst past what the server checks at once with 503 at once, without touching the database", async () => {
    // 4 sign-ins run at a time and 16 wait (auth.server.ts); the other 20 of 40 are refused before any query.
    const emails = Array.from({ length: 40 }, () => uniqueEmail("burst"));
    const answers = await Promise.all(emails.map((email) => signIn(email, "whatever-1", newAddress())));
    const busy = emails.filter((_, i) => statusOf(answers[i]) === 503);
    expect(busy.length).toBeGreaterThanOrEqual(20);
    expect(JSON.stringify(dataOf(answers[emails.indexOf(busy[0]!)]))).toMatch(/busy signing people in/);
    for (const [i, answer] of answers.entries()) expect([401, 503]).toContain(statusOf(answer) ?? emails[i]);
    const checked = await db
      .select()
      .from(signInAttempts)
      .where(sql`${signInAttempts.email} in ${busy}`);
    expect(checked).toHaveLength(0);
    // Once the burst is over, sign-in works as before.
    const owner = await newStaff();
    expect(statusOf(await signIn(owner.email, owner.password, newAddress()))).toBe(302);
  });
});

async function queuedAccountMail(email: string) {
  const rows = await db.execute<{ data: { kind: string; email: string } }>(
    sql`select data from pgboss.job where name = 'account-mail' and data->>'email' = ${email}`,
  );
  return rows.rows.map((r) => r.data);
}

describe("reset and sign-in-link e-mails", () => {
  it.each([
    ["/forgot-password", forgotAction, "reset"],
    ["/sign-in-link", linkAction, "sign_in"],
  ] as const)(
    "%s does the same work for a known and an unknown address: it queues the e-mail and sends nothing itself",
    async (path, action, kind) => {
      const [patient] = await db.select().from(users).where(eq(users.email, "patient@dioptra-demo.test"));
      const known = kind === "reset" ? (await newStaff()).email : patient!.email;
      const unknown = uniqueEmail("ghost");
      const answers = [];
      for (const email of [known, unknown]) {
        const before = (await queuedAccountMail(email)).length;
        const res = await run(
          action,
          makeRequest(path, { form: { email }, headers: { "x-forwarded-for": newAddress() } }),
        );
        expect(statusOf(res)).toBe(200);
        answers.push(JSON.stringify(dataOf(res)));
        // One job queued for either address, with nothing in it that depends on the account.
        expect((await queuedAccountMail(email)).length).toBe(before + 1);
        expect((await queuedAccountMail(email)).at(-1)).toEqual({ kind, email, ip: expect.any(String) });
      }
      expect(answers[0]).toBe(answers[1]);
      // Nothing was sent from the request itself.
      const sentBefore = (await mailTo(known)).length;
      await deliverAccountMail({ kind, email: known, ip: null });
      await deliverAccountMail({ kind, email: unknown, ip: null });
      expect((await mailTo(known)).length).toBe(sentBefore + 1);
      expect(await mailTo(unknown)).toHaveLength(0);
    },
  );

  it("limits e-mails per address (3, then one per 20 minutes) and requests per client (10, then one per 6 minutes)", async () => {
    const email = uniqueEmail("often");
    for (let i = 0; i < 3; i++)
      expect(
        statusOf(
          await run(
            forgotAction,
            makeRequest("/forgot-password", { form: { email }, headers: { "x-forwarded-for": newAddress() } }),
          ),
        ),
      ).toBe(200);
    const perAddress = await run(
      forgotAction,
      makeRequest("/forgot-password", { form: { email }, headers: { "x-forwarded-for": newAddress() } }),
    );
    expect(statusOf(perAddress)).toBe(429);
    expect(JSON.stringify(dataOf(perAddress))).toMatch(/already been asked for this address/);
    expect(await queuedAccountMail(email)).toHaveLength(3);

    const client = newAddress();
    for (let i = 0; i < 10; i++)
      expect(
        statusOf(
          await run(
            linkAction,
            makeRequest("/sign-in-link", {
              form: { email: uniqueEmail("many") },
              headers: { "x-forwarded-for": client },
            }),
          ),
        ),
      ).toBe(200);
    const perClient = await run(
      linkAction,
      makeRequest("/sign-in-link", { form: { email: uniqueEmail("many") }, headers: { "x-forwarded-for": client } }),
    );
    expect(statusOf(perClient)).toBe(429);
    expect(JSON.stringify(dataOf(perClient))).toMatch(/from your connection/);
  });
});
