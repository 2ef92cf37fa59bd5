import { existsSync } from "node:fs";
import { join } from "node:path";
import type { TestProject } from "vitest/node";
import { BUILD_DIR, E2E } from "../support/ports";
import {
  freshDatabase,
  prepareJobQueues,
  ROOT,
  s3Env,
  startMailStandIn,
  startProcess,
  startS3StandIn,
  startStripeStandIn,
  stopProcess,
  waitForPort,
} from "../support/services";

/**
 * Browser tests run against the production build served by react-router-serve, with a fresh
 * seeded database and the real mail stand-in, all on test ports.
 */
export default async function setup(project: TestProject) {
  if (!existsSync(join(ROOT, BUILD_DIR, "server/index.js")))
    throw new Error("No build found: run `npm test` (it builds first) or `npm run build`.");
  const databaseUrl = await freshDatabase(E2E.db);
  await prepareJobQueues(databaseUrl);
  const mail = await startMailStandIn(E2E.smtp, E2E.mailApi);
  const baseUrl = `http://127.0.0.1:${E2E.app}`;
  const stripe = await startStripeStandIn(E2E.stripe, `${baseUrl}/api/webhooks/stripe`);
  const s3 = await startS3StandIn(E2E.s3);
  const app = startProcess(
    "app",
    join(ROOT, "node_modules/.bin/react-router-serve"),
    [`${BUILD_DIR}/server/index.js`],
    {
      NODE_ENV: "production",
      HOST: "127.0.0.1",
      PORT: String(E2E.app),
      APP_URL: baseUrl,
      DATABASE_URL: databaseUrl,
      SMTP_PORT: String(E2E.smtp),
      MAILBOX_API_URL: `http://127.0.0.1:${E2E.mailApi}`,
      DIOPTRA_DEMO: "1",
      STRIPE_API_HOST: "127.0.0.1",
      STRIPE_API_PORT: String(E2E.stripe),
      STRIPE_API_PROTOCOL: "http",
      ...s3Env(E2E.s3),
    },
  );
  // The job worker (reminder and other e-mails), as npm start runs it beside the app.
  const workerPort = E2E.smtp + 3;
  const worker = startProcess("worker", join(ROOT, "node_modules/.bin/tsx"), ["app/ops/worker.ts"], {
    DATABASE_URL: databaseUrl,
    SMTP_PORT: String(E2E.smtp),
    APP_URL: baseUrl,
    WORKER_PORT: String(workerPort),
    WORKER_POLL_SECONDS: "0.5",
    ...s3Env(E2E.s3),
  });
  try {
    await waitForPort(E2E.app, 180_000);
    await waitForPort(workerPort, 180_000);
  } catch (error) {
    // Leave no server behind when the set-up gives up.
    for (const child of [app, worker, mail, stripe, s3]) await stopProcess(child);
    throw error;
  }
  project.provide("baseUrl", baseUrl);
  project.provide("mailApiPort", E2E.mailApi);
  project.provide("e2eDatabaseUrl", databaseUrl);
  project.provide("stripePort", E2E.stripe);
  return async () => {
    await stopProcess(app);
    await stopProcess(worker);
    await stopProcess(mail);
    await stopProcess(stripe);
    await stopProcess(s3);
  };
}

declare module "vitest" {
  export interface ProvidedContext {
    baseUrl: string;
    mailApiPort: number;
    e2eDatabaseUrl: string;
    stripePort: number;
  }
}
