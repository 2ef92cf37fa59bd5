import type { TestProject } from "vitest/node";
import { UNIT } from "./ports";
import { freshDatabase, prepareJobQueues, startMailStandIn, startStripeStandIn, stopProcess } from "./services";

/** Integration tests: a fresh database for the run and the mail stand-in on test ports. */
export default async function setup(project: TestProject) {
  const url = await freshDatabase(UNIT.db);
  await prepareJobQueues(url);
  const mail = await startMailStandIn(UNIT.smtp, UNIT.mailApi);
  const stripe = await startStripeStandIn(UNIT.stripe, "");
  project.provide("databaseUrl", url);
  return async () => {
    await stopProcess(mail);
    await stopProcess(stripe);
  };
}

declare module "vitest" {
  export interface ProvidedContext {
    databaseUrl: string;
  }
}
