/**
 * Test services: a fresh PostgreSQL database per run (created from the committed migrations),
 * and the real local stand-ins started as child processes. Used by the global setups.
 */
import { spawn, type ChildProcess } from "node:child_process";
import { mkdirSync, rmSync } from "node:fs";
import { createConnection } from "node:net";
import { join } from "node:path";
import PgBoss from "pg-boss";
import pg from "pg";
import { runMigrations } from "../../app/ops/migrate";
import { databaseUrl } from "../../app/utils/db-url";
import { seed } from "../../seeds/seed";
import { TEMPLATE_DB } from "./ports";

export const ROOT = new URL("../..", import.meta.url).pathname.replace(/\/$/, "");

/** URL of a database called `name` on the same server as the app's database. */
export function testDatabaseUrl(name: string) {
  const url = new URL(databaseUrl());
  url.pathname = `/${name}`;
  return url.toString();
}

/**
 * Test databases do not wait for the disk on each commit: a crash could lose the last moments of
 * a test run, never corrupt it, and the many small commits of a browser flow stop queueing on
 * fsync. (The setting is per database, so the practice's own database is untouched.)
 */
const NO_COMMIT_WAIT = (name: string) => `ALTER DATABASE "${name}" SET synchronous_commit = off`;

/** Drops and re-creates `name`, applies the migrations and seeds the demo practice. */
export async function freshDatabase(name: string) {
  const admin = new URL(databaseUrl());
  admin.pathname = "/postgres";
  const client = new pg.Client({ connectionString: admin.toString() });
  await client.connect();
  try {
    await client.query(`DROP DATABASE IF EXISTS "${name}" WITH (FORCE)`);
    await client.query(`CREATE DATABASE "${name}"`);
    await client.query(NO_COMMIT_WAIT(name));
  } finally {
    await client.end();
  }
  const url = testDatabaseUrl(name);
  await runMigrations(url);
  await seed(url);
  return url;
}

/**
 * The run's one freshly migrated and seeded database, with its job queues: made once per run by
 * whichever global set-up asks first (both projects' set-ups run in Vitest's main process), then
 * only copied, so the demo is seeded once rather than once per project.
 */
export function templateDatabase(): Promise<string> {
  const shared = globalThis as { dioptraTemplate?: Promise<string> };
  shared.dioptraTemplate ??= (async () => {
    const url = await freshDatabase(TEMPLATE_DB);
    await prepareJobQueues(url);
    return url;
  })();
  return shared.dioptraTemplate;
}

/**
 * Drops and re-creates `name` as a copy of `template` (a fresh, seeded database with its job
 * queues, no open connections): much faster than migrating and seeding again.
 */
export async function cloneDatabase(template: string, name: string) {
  const admin = new URL(databaseUrl());
  admin.pathname = "/postgres";
  const client = new pg.Client({ connectionString: admin.toString() });
  await client.connect();
  try {
    await client.query(`DROP DATABASE IF EXISTS "${name}" WITH (FORCE)`);
    await client.query(`CREATE DATABASE "${name}" TEMPLATE "${template}" STRATEGY FILE_COPY`);
    await client.query(NO_COMMIT_WAIT(name));
  } finally {
    await client.end();
  }
  return testDatabaseUrl(name);
}

/** Stand-ins start through tsx; on a busy 2-core machine that can take well over 30 s. */
const STANDIN_START_MS = 120_000;

export function waitForPort(port: number, timeoutMs = 30_000): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  return new Promise((resolve, reject) => {
    const attempt = () => {
      const socket = createConnection({ host: "127.0.0.1", port });
      socket.once("connect", () => {
        socket.end();
        resolve();
      });
      socket.once("error", () => {
        socket.destroy();
        if (Date.now() > deadline) reject(new Error(`nothing listens on 127.0.0.1:${port}`));
        else setTimeout(attempt, 100);
      });
    };
    attempt();
  });
}

export function startProcess(name: string, command: string, args: string[], env: Record<string, string>): ChildProcess {
  const child = spawn(command, args, { cwd: ROOT, env: { ...process.env, ...env }, stdio: ["ignore", "pipe", "pipe"] });
  const tag = `[${name}] `;
  child.stdout?.on("data", (d: Buffer) => process.env.TEST_VERBOSE && process.stdout.write(tag + d.toString()));
  child.stderr?.on("data", (d: Buffer) => process.stderr.write(tag + d.toString()));
  return child;
}

export async function stopProcess(child: ChildProcess | undefined) {
  if (!child || child.exitCode !== null) return;
  await new Promise<void>((resolve) => {
    child.once("exit", () => resolve());
    child.kill("SIGTERM");
    setTimeout(() => child.kill("SIGKILL"), 3000).unref();
  });
}

/**
 * The Stripe stand-in on its own port. `webhookUrl` "" keeps events without sending them (the
 * integration tests read them from /_standin/events and post them to the webhook action).
 */
export async function startStripeStandIn(port: number, webhookUrl: string) {
  const child = startProcess("stripe", join(ROOT, "node_modules/.bin/tsx"), ["app/standins/stripe-server.ts"], {
    STRIPE_STANDIN_PORT: String(port),
    STRIPE_WEBHOOK_URL: webhookUrl,
    STRIPE_SECRET_KEY: "sk_test_dioptra_local_standin",
    STRIPE_WEBHOOK_SECRET: "whsec_dioptra_local_standin",
  });
  await waitForPort(port, STANDIN_START_MS);
  return child;
}

/** The object-storage stand-in (s3rver) on its own port with an empty folder and the app's bucket. */
export async function startS3StandIn(port: number) {
  const dir = join(ROOT, ".data", `test-s3-${port}`);
  rmSync(dir, { recursive: true, force: true });
  mkdirSync(dir, { recursive: true });
  const child = startProcess("s3", join(ROOT, "node_modules/.bin/tsx"), ["app/standins/s3-server.ts"], {
    S3_STANDIN_PORT: String(port),
    S3_STANDIN_DIR: dir,
  });
  await waitForPort(port, STANDIN_START_MS);
  return child;
}

/** Environment that points the app (or a test process) at the object-storage stand-in on `port`. */
export function s3Env(port: number): Record<string, string> {
  return {
    S3_ENDPOINT: `http://127.0.0.1:${port}`,
    S3_REGION: "us-east-1",
    S3_ACCESS_KEY_ID: "S3RVER",
    S3_SECRET_ACCESS_KEY: "S3RVER",
    S3_FORCE_PATH_STYLE: "1",
  };
}

/** The mail stand-in on its own ports with an empty mailbox folder. */
export async function startMailStandIn(smtpPort: number, apiPort: number) {
  const dir = join(ROOT, ".data", `test-mail-${smtpPort}`);
  rmSync(dir, { recursive: true, force: true });
  mkdirSync(dir, { recursive: true });
  const child = startProcess("mail", join(ROOT, "node_modules/.bin/tsx"), ["app/standins/mail-server.ts"], {
    SMTP_PORT: String(smtpPort),
    MAILBOX_API_PORT: String(apiPort),
    MAILBOX_DIR: dir,
  });
  await waitForPort(smtpPort, STANDIN_START_MS);
  await waitForPort(apiPort, STANDIN_START_MS);
  return child;
}

/**
 * Creates pg-boss's schema and every declared queue in a fresh database before any test runs.
 * Creating a queue attaches a partition to pgboss.job, which waits for every transaction that
 * holds a lock on it; done lazily inside concurrent booking transactions of several test workers,
 * those waits could form a cycle that PostgreSQL cannot see (it spans two connections).
 * The worker process does the same at start-up in `npm start`.
 */
export async function prepareJobQueues(url: string) {
  await import("../../app/utils/job-list.server");
  const { queueDefinitions } = await import("../../app/utils/jobs.server");
  const boss = new PgBoss({ connectionString: url, max: 2, supervise: false, schedule: false });
  await boss.start();
  try {
    for (const { name, defaults } of queueDefinitions()) {
      if (!(await boss.getQueue(name))) await boss.createQueue(name, { name, ...defaults });
    }
  } finally {
    await boss.stop({ graceful: false, wait: true });
  }
}
