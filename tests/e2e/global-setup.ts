import type { ChildProcess } from "node:child_process";
import { existsSync } from "node:fs";
import { join } from "node:path";
import type { TestProject } from "vitest/node";
import { BUILD_DIR, e2eStackPorts, TEMPLATE_DB } from "../support/ports";
import {
  cloneDatabase,
  templateDatabase,
  ROOT,
  s3Env,
  startMailStandIn,
  startProcess,
  startS3StandIn,
  startStripeStandIn,
  stopProcess,
  waitForPort,
} from "../support/services";

/** How many browser test files run at once, each against its own stack (see `e2eStacks`). */
export function e2eStackCount() {
  const n = Number(process.env.DIOPTRA_E2E_STACKS ?? 2);
  if (!Number.isInteger(n) || n < 1 || n > 9)
    throw new Error(`DIOPTRA_E2E_STACKS must be a whole number from 1 to 9, not ${process.env.DIOPTRA_E2E_STACKS}`);
  return n;
}

/** What a browser test needs to know about its stack; `tests/e2e/setup.ts` hands one to each test file. */
export type E2EStack = {
  baseUrl: string;
  mailApiPort: number;
  e2eDatabaseUrl: string;
  stripePort: number;
  sessionSecret: string;
};

/** Cookies of every stack are signed with this; the tests sign their own sessions with it too. */
const SESSION_SECRET = "dioptra-browser-tests-session-secret";

/**
 * Browser tests run against the production build served by react-router-serve, each test file on
 * one of `DIOPTRA_E2E_STACKS` stacks: its own seeded database (copied from one freshly migrated
 * and seeded database), app server, job worker and mail, Stripe and object-storage stand-ins, so
 * files running at the same time never share a row, a mailbox or a queue.
 */
export default async function setup(project: TestProject) {
  if (!existsSync(join(ROOT, BUILD_DIR, "server/index.js")))
    throw new Error("No build found: run `npm test` (it builds first) or `npm run build`.");
  const count = e2eStackCount();
  await templateDatabase();
  const urls: string[] = [];
  for (let n = 0; n < count; n++) urls.push(await cloneDatabase(TEMPLATE_DB, e2eStackPorts(n).db));

  const children: ChildProcess[] = [];
  const startStack = async (n: number): Promise<E2EStack> => {
    const ports = e2eStackPorts(n);
    const databaseUrl = urls[n]!;
    const baseUrl = `http://127.0.0.1:${ports.app}`;
    const started = await Promise.allSettled([
      startMailStandIn(ports.smtp, ports.mailApi),
      startStripeStandIn(ports.stripe, `${baseUrl}/api/webhooks/stripe`),
      startS3StandIn(ports.s3),
    ]);
    for (const r of started) if (r.status === "fulfilled") children.push(r.value);
    const failed = started.find((r) => r.status === "rejected");
    if (failed) throw failed.reason;
    const app = startProcess(
      `app${n || ""}`,
      join(ROOT, "node_modules/.bin/react-router-serve"),
      [`${BUILD_DIR}/server/index.js`],
      {
        NODE_ENV: "production",
        HOST: "127.0.0.1",
        PORT: String(ports.app),
        APP_URL: baseUrl,
        DATABASE_URL: databaseUrl,
        SESSION_SECRET,
        SMTP_PORT: String(ports.smtp),
        MAILBOX_API_URL: `http://127.0.0.1:${ports.mailApi}`,
        DIOPTRA_DEMO: "1",
        STRIPE_API_HOST: "127.0.0.1",
        STRIPE_API_PORT: String(ports.stripe),
        STRIPE_API_PROTOCOL: "http",
        ...s3Env(ports.s3),
      },
    );
    // The job worker (reminder and other e-mails), as npm start runs it beside the app.
    const worker = startProcess(`worker${n || ""}`, join(ROOT, "node_modules/.bin/tsx"), ["app/ops/worker.ts"], {
      DATABASE_URL: databaseUrl,
      SESSION_SECRET,
      SMTP_PORT: String(ports.smtp),
      APP_URL: baseUrl,
      WORKER_PORT: String(ports.worker),
      WORKER_POLL_SECONDS: "0.5",
      ...s3Env(ports.s3),
    });
    children.push(app, worker);
    await waitForPort(ports.app, 180_000);
    await waitForPort(ports.worker, 180_000);
    return {
      baseUrl,
      mailApiPort: ports.mailApi,
      e2eDatabaseUrl: databaseUrl,
      stripePort: ports.stripe,
      sessionSecret: SESSION_SECRET,
    };
  };
  let stacks: E2EStack[];
  try {
    stacks = await Promise.all(Array.from({ length: count }, (_, n) => startStack(n)));
  } catch (error) {
    // Leave no server behind when the set-up gives up.
    await Promise.all(children.map((c) => stopProcess(c)));
    throw error;
  }
  project.provide("e2eStacks", stacks);
  // The first stack's values, replaced per test file by tests/e2e/setup.ts.
  project.provide("baseUrl", stacks[0]!.baseUrl);
  project.provide("mailApiPort", stacks[0]!.mailApiPort);
  project.provide("e2eDatabaseUrl", stacks[0]!.e2eDatabaseUrl);
  project.provide("stripePort", stacks[0]!.stripePort);
  project.provide("sessionSecret", SESSION_SECRET);
  return async () => {
    await Promise.all(children.map((c) => stopProcess(c)));
  };
}

declare module "vitest" {
  export interface ProvidedContext {
    e2eStacks: E2EStack[];
    baseUrl: string;
    mailApiPort: number;
    e2eDatabaseUrl: string;
    stripePort: number;
    sessionSecret: string;
  }
}
