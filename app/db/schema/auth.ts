import { sql } from "drizzle-orm";
import {
  boolean,
  doublePrecision,
  index,
  inet,
  integer,
  pgEnum,
  pgTable,
  primaryKey,
  text,
  timestamp,
  uniqueIndex,
  uuid,
} from "drizzle-orm/pg-core";
import { patients } from "./patients";

export const roleEnum = pgEnum("role", ["owner", "optometrist", "receptionist", "patient"]);
export type Role = (typeof roleEnum.enumValues)[number];

export const users = pgTable(
  "users",
  {
    id: uuid().primaryKey().defaultRandom(),
    email: text().notNull(),
    name: text().notNull(),
    role: roleEnum().notNull(),
    /** Null until an invited user sets a password. */
    passwordHash: text(),
    active: boolean().notNull().default(true),
    /** Professional registration shown on prescriptions and letters (clinical roles). */
    licenceNumber: text(),
    /** For the patient role: the one patient record this account may reach. */
    patientId: uuid().references(() => patients.id, { onDelete: "set null" }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    uniqueIndex("users_email_lower_uq").on(sql`lower(${t.email})`),
    uniqueIndex("users_patient_uq").on(t.patientId),
  ],
);

export const sessions = pgTable(
  "sessions",
  {
    id: text().primaryKey(),
    userId: uuid()
      .notNull()
      .references(() => users.id, { onDelete: "cascade" }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    expiresAt: timestamp({ withTimezone: true }).notNull(),
    userAgent: text(),
    ip: text(),
  },
  (t) => [index("sessions_user_idx").on(t.userId)],
);

export const tokenPurposeEnum = pgEnum("token_purpose", ["reset", "invite", "sign_in"]);

/** Single-use, expiring tokens for password reset, invitations and e-mailed sign-in links; only a hash is stored. */
export const userTokens = pgTable(
  "user_tokens",
  {
    id: uuid().primaryKey().defaultRandom(),
    userId: uuid()
      .notNull()
      .references(() => users.id, { onDelete: "cascade" }),
    purpose: tokenPurposeEnum().notNull(),
    tokenHash: text().notNull(),
    expiresAt: timestamp({ withTimezone: true }).notNull(),
    usedAt: timestamp({ withTimezone: true }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [uniqueIndex("user_tokens_hash_uq").on(t.tokenHash)],
);

/** Every sign-in attempt, used for throttling. */
export const signInAttempts = pgTable(
  "sign_in_attempts",
  {
    id: integer().primaryKey().generatedAlwaysAsIdentity(),
    email: text().notNull(),
    ip: inet(),
    succeeded: boolean().notNull(),
    at: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [index("sign_in_attempts_email_at_idx").on(sql`lower(${t.email})`, t.at)],
);

/**
 * Attempt budgets (token buckets) for sign-in and e-mailed links, one row per scope and key:
 * `tokens` refill continuously up to the scope's capacity and each attempt takes one, in a
 * single upsert, so concurrent requests on any number of app servers share one count.
 * Scopes: `signin-address`, `signin-account`, `signin-pair` (account + address),
 * `mail-address`, `mail-client`.
 */
export const attemptBudgets = pgTable(
  "attempt_budgets",
  {
    scope: text().notNull(),
    /** The account's lower-cased e-mail address, or "" when the budget is not an account's. */
    account: text().notNull().default(""),
    /** The client's address, or "" when the budget is not an address's. */
    address: text().notNull().default(""),
    tokens: doublePrecision().notNull(),
    /** Whether the last attempt found a token. */
    granted: boolean().notNull(),
    updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [primaryKey({ columns: [t.scope, t.account, t.address] }), index("attempt_budgets_account_idx").on(t.account)],
);
