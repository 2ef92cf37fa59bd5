/**
 * Attempt budgets kept in PostgreSQL (table `attempt_budgets`), so every app server shares them
 * and none keeps state of its own. Each budget is a token bucket: it holds up to `capacity`
 * attempts and refills one every `refillSeconds`. Taking an attempt is one upsert that refills,
 * takes a token if there is one and reports whether it did, under the row's lock — concurrent
 * requests cannot both take the last token. An empty budget slows its key down to one attempt
 * per refill period; it never locks for good.
 */
import { and, eq, or, sql } from "drizzle-orm";
import { attemptBudgets } from "~/db/schema";
import { db } from "./db.server";

export type BudgetScope = "signin-address" | "signin-account" | "signin-pair" | "mail-address" | "mail-client";
export type Budget = { capacity: number; refillSeconds: number };

export const BUDGETS: Record<BudgetScope, Budget> = {
  /** Failed sign-ins from one client address, whatever the account: refused before any password is hashed. */
  "signin-address": { capacity: 30, refillSeconds: 30 },
  /** Failed sign-ins of one account from one client address. */
  "signin-pair": { capacity: 5, refillSeconds: 180 },
  /** Failed sign-ins of one account from all addresses; addresses that signed in to it before are exempt. */
  "signin-account": { capacity: 20, refillSeconds: 60 },
  /** Reset and sign-in-link e-mails to one address. */
  "mail-address": { capacity: 3, refillSeconds: 20 * 60 },
  /** Reset and sign-in-link requests from one client address. */
  "mail-client": { capacity: 10, refillSeconds: 6 * 60 },
};

export type Take = { granted: boolean; retryAfterSeconds: number };

/** Takes one attempt from the budget of (scope, account, address); atomic across servers. */
export async function takeAttempt(scope: BudgetScope, key: { account?: string; address?: string }): Promise<Take> {
  const { capacity, refillSeconds } = BUDGETS[scope];
  const account = key.account ?? "";
  const address = key.address ?? "";
  // The bucket's level now: what it held plus what has refilled since, at most its capacity.
  const level = sql`least(${capacity}::float8, attempt_budgets.tokens + extract(epoch from (now() - attempt_budgets.updated_at)) / ${refillSeconds}::float8)`;
  const result = await db.execute<{ tokens: number; granted: boolean }>(sql`
    insert into attempt_budgets (scope, account, address, tokens, granted, updated_at)
    values (${scope}, ${account}, ${address}, ${capacity - 1}::float8, true, now())
    on conflict (scope, account, address) do update set
      granted = ${level} >= 1,
      tokens = case when ${level} >= 1 then ${level} - 1 else ${level} end,
      updated_at = now()
    returning tokens, granted`);
  const row = result.rows[0]!;
  return {
    granted: row.granted,
    retryAfterSeconds: row.granted ? 0 : Math.max(1, Math.ceil((1 - Number(row.tokens)) * refillSeconds)),
  };
}

/** Gives back an attempt taken for something that turned out fine (a successful sign-in). */
export async function refundAttempt(scope: BudgetScope, key: { account?: string; address?: string }) {
  const { capacity } = BUDGETS[scope];
  await db
    .update(attemptBudgets)
    .set({ tokens: sql`least(${capacity}::float8, ${attemptBudgets.tokens} + 1)` })
    .where(
      and(
        eq(attemptBudgets.scope, scope),
        eq(attemptBudgets.account, key.account ?? ""),
        eq(attemptBudgets.address, key.address ?? ""),
      ),
    );
}

/**
 * Clears an account's sign-in budgets: all of them after a password reset, or (with `address`)
 * the account-wide one and this address's after a successful sign-in.
 */
export async function clearAccountBudgets(email: string, address?: string) {
  const account = email.toLowerCase();
  await db
    .delete(attemptBudgets)
    .where(
      and(
        eq(attemptBudgets.account, account),
        address === undefined
          ? or(eq(attemptBudgets.scope, "signin-account"), eq(attemptBudgets.scope, "signin-pair"))
          : or(
              eq(attemptBudgets.scope, "signin-account"),
              and(eq(attemptBudgets.scope, "signin-pair"), eq(attemptBudgets.address, address)),
            ),
      ),
    );
}

/** "3 minutes", "40 seconds": how long to wait, for messages. */
export function waitText(seconds: number) {
  if (seconds < 90) return `${seconds} second${seconds === 1 ? "" : "s"}`;
  const minutes = Math.ceil(seconds / 60);
  return `${minutes} minute${minutes === 1 ? "" : "s"}`;
}
