import type { TestProject } from "vitest/node";
import { TEMPLATE_DB, UNIT } from "./ports";
import {
  cloneDatabase,
  templateDatabase,
  startMailStandIn,
  startS3StandIn,
  startStripeStandIn,
  stopProcess,
} from "./services";

/**
 * Integration tests: a fresh database for the run, copied once per test worker so files running
 * at the same time never write the same rows (the practice's settings, counters), and the mail,
 * Stripe and object-storage stand-ins on test ports.
 */
export default async function setup(project: TestProject) {
  await templateDatabase();
  const url = await cloneDatabase(TEMPLATE_DB, UNIT.db);
  const workers = Math.max(1, Number(process.env.DIOPTRA_TEST_WORKERS ?? 3));
  const urls: string[] = [];
  for (let n = 1; n <= workers; n++) urls.push(await cloneDatabase(TEMPLATE_DB, `${UNIT.db}_p${n}`));
  const started = await Promise.allSettled([
    startMailStandIn(UNIT.smtp, UNIT.mailApi),
    startStripeStandIn(UNIT.stripe, ""),
    startS3StandIn(UNIT.s3),
  ]);
  const failed = started.find((r) => r.status === "rejected");
  if (failed) {
    // Leave no stand-in behind when the set-up gives up.
    for (const r of started) if (r.status === "fulfilled") await stopProcess(r.value);
    throw failed.reason;
  }
  const [mail, stripe, s3] = started.map(
    (r) => (r as PromiseFulfilledResult<Awaited<ReturnType<typeof startMailStandIn>>>).value,
  );
  project.provide("databaseUrl", url);
  project.provide("databaseUrls", urls);
  return async () => {
    await stopProcess(mail);
    await stopProcess(stripe);
    await stopProcess(s3);
  };
}

declare module "vitest" {
  export interface ProvidedContext {
    databaseUrl: string;
    /** One copy of the test database per test worker (VITEST_POOL_ID 1, 2, …). */
    databaseUrls: string[];
  }
}
