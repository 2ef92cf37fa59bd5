/**
 * The job queue: pg-boss, keeping its jobs in the app's own PostgreSQL database (schema `pgboss`),
 * so queued work survives restarts and any number of app servers and workers can share it.
 *
 *   enqueue(name, data, opts)      queue a job (pass `tx` to queue it in the same transaction as a write)
 *   defineJob(name, handler, opts) declare a queue and its handler (run by the worker process)
 *   startWorkers()                 the worker process: poll every defined queue
 *
 * App servers only enqueue; `app/ops/worker.ts` runs the handlers. A handler that throws is
 * retried with back-off (retryLimit / retryDelay / retryBackoff of its queue).
 */
import PgBoss from "pg-boss";
import type { Tx } from "./db.server";
import { env } from "./env.server";

export type JobOptions = {
  /** Run no earlier than this. */
  startAfter?: Date;
  /** At most one queued or active job per key in the queue (pg-boss singleton key). */
  singletonKey?: string;
  retryLimit?: number;
  /** Seconds before the first retry; doubled each time when retryBackoff is on. */
  retryDelay?: number;
  retryBackoff?: boolean;
  /** Queue inside this transaction: the job exists only if the transaction commits. */
  tx?: Tx;
};

export type JobContext = { id: string; retryCount: number; retryLimit: number };
export type JobHandler<T> = (data: T, job: JobContext) => Promise<void>;
export type QueueDefaults = {
  retryLimit?: number;
  retryDelay?: number;
  retryBackoff?: boolean;
  expireInSeconds?: number;
};

type Defined = { handler: JobHandler<never>; defaults: QueueDefaults };
const registry = new Map<string, Defined>();

declare global {
  // One pg-boss instance per process, reused across dev-server reloads.
  var __dioptraBoss: Promise<PgBoss> | undefined;
  var __dioptraQueues: Map<string, Promise<void>> | undefined;
}

function connectionString() {
  return process.env.DATABASE_URL ?? env.DATABASE_URL;
}

/** The process's pg-boss, started on first use. Maintenance runs only in worker processes. */
export function getBoss(opts: { supervise?: boolean } = {}): Promise<PgBoss> {
  globalThis.__dioptraBoss ??= (async () => {
    const boss = new PgBoss({
      connectionString: connectionString(),
      max: Number(process.env.DIOPTRA_JOBS_POOL ?? 4),
      supervise: opts.supervise ?? false,
      schedule: false,
      application_name: "dioptra-jobs",
    });
    boss.on("error", (error) => console.error("[jobs]", error.message));
    await boss.start();
    return boss;
  })().catch((error) => {
    globalThis.__dioptraBoss = undefined;
    throw error;
  });
  return globalThis.__dioptraBoss;
}

async function ensureQueue(boss: PgBoss, name: string) {
  const queues = (globalThis.__dioptraQueues ??= new Map());
  let ready = queues.get(name);
  if (!ready) {
    const defaults = registry.get(name)?.defaults ?? {};
    ready = (async () => {
      if (!(await boss.getQueue(name))) await boss.createQueue(name, { name, ...defaults });
    })().catch((error) => {
      queues.delete(name);
      throw error;
    });
    queues.set(name, ready);
  }
  await ready;
}

/** pg-boss speaks through `executeSql`; inside a transaction it uses the transaction's own client. */
function txDb(tx: Tx): PgBoss.Db {
  const client = (
    tx as unknown as {
      session: { client: { query: (text: string, values: unknown[]) => Promise<{ rows: unknown[] }> } };
    }
  ).session.client;
  return { executeSql: (text, values) => client.query(text, values) };
}

/** Queues a job; returns its id, or null when a job with the same singleton key is already queued. */
export async function enqueue<T extends object>(name: string, data: T, opts: JobOptions = {}): Promise<string | null> {
  const boss = await getBoss();
  await ensureQueue(boss, name);
  const { tx, ...rest } = opts;
  const send: PgBoss.SendOptions = Object.fromEntries(Object.entries(rest).filter(([, v]) => v !== undefined));
  if (tx) send.db = txDb(tx);
  return boss.send(name, data, send);
}

/** Declares a queue and its handler. Import the module that calls this from the worker's job list. */
export function defineJob<T extends object>(name: string, handler: JobHandler<T>, defaults: QueueDefaults = {}) {
  registry.set(name, { handler: handler as JobHandler<never>, defaults });
  return {
    name,
    enqueue: (data: T, opts?: JobOptions) => enqueue(name, data, opts),
  };
}

export function definedJobs(): string[] {
  return [...registry.keys()];
}

/** Every declared queue with its defaults (for creating the queues ahead of any traffic). */
export function queueDefinitions(): { name: string; defaults: QueueDefaults }[] {
  return [...registry.entries()].map(([name, d]) => ({ name, defaults: d.defaults }));
}

/** Polls the defined queues (all, or the named ones) and runs their handlers, one job at a time per queue. */
export async function startWorkers(names: string[] = definedJobs(), opts: { pollingIntervalSeconds?: number } = {}) {
  const boss = await getBoss({ supervise: true });
  for (const name of names) {
    const defined = registry.get(name);
    if (!defined) throw new Error(`No job defined as ${name}`);
    await ensureQueue(boss, name);
    await boss.work<object>(
      name,
      { includeMetadata: true, batchSize: 1, pollingIntervalSeconds: opts.pollingIntervalSeconds ?? 1 },
      async (jobs) => {
        for (const job of jobs) {
          await defined.handler(job.data as never, {
            id: job.id,
            retryCount: job.retryCount,
            retryLimit: job.retryLimit,
          });
        }
      },
    );
  }
  return boss;
}

/** Stops this process's pg-boss (workers finish their current job first). */
export async function stopJobs() {
  const pending = globalThis.__dioptraBoss;
  globalThis.__dioptraBoss = undefined;
  globalThis.__dioptraQueues = undefined;
  if (pending) await (await pending).stop({ graceful: true, wait: true, timeout: 10_000 });
}
