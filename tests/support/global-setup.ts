import type { TestProject } from "vitest/node";
import { UNIT } from "./ports";
import {
  freshDatabase,
  prepareJobQueues,
  startMailStandIn,
  startS3StandIn,
  startStripeStandIn,
  stopProcess,
} from "./services";

/** Integration tests: a fresh database for the run and the mail, Stripe and object-storage stand-ins on test ports. */
export default async function setup(project: TestProject) {
  const url = await freshDatabase(UNIT.db);
  await prepareJobQueues(url);
  const mail = await startMailStandIn(UNIT.smtp, UNIT.mailApi);
  const stripe = await startStripeStandIn(UNIT.stripe, "");
  const s3 = await startS3StandIn(UNIT.s3);
  project.provide("databaseUrl", url);
  return async () => {
    await stopProcess(mail);
    await stopProcess(stripe);
    await stopProcess(s3);
  };
}

declare module "vitest" {
  export interface ProvidedContext {
    databaseUrl: string;
  }
}
