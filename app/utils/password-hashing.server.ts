/**
 * Password hashing off the main thread. bcryptjs is plain JavaScript: on the event loop, a burst
 * of sign-ins would stall every other request while it hashes. Here a small pool of worker
 * threads does the hashing; the event loop only posts a message and waits. The queue is bounded:
 * past MAX_WAITING a caller gets `HashingBusyError` at once instead of joining a long line.
 */
import { createRequire } from "node:module";
import { availableParallelism } from "node:os";
import { Worker } from "node:worker_threads";
import { DomainError, type DomainErrorOptions } from "./failure.server";

/** Too many passwords waiting to be hashed; answered 503 (try again in a moment). */
export class HashingBusyError extends DomainError {
  constructor(message: string, options: DomainErrorOptions = {}) {
    super(message, { status: 503, ...options });
  }
}

/** Threads in the pool: one per spare core, at least one, at most two (the server needs a core too). */
const THREADS = Math.max(1, Math.min(2, availableParallelism() - 1));
const MAX_WAITING = 20;

type Job = { op: "hash"; password: string; cost: number } | { op: "compare"; password: string; hash: string };
type Pending = { job: Job; resolve: (value: string | boolean) => void; reject: (error: Error) => void };

// The worker runs CommonJS from source; bcryptjs is resolved here, where the app's modules are.
const BCRYPT_PATH = createRequire(import.meta.url).resolve("bcryptjs");
const WORKER_SOURCE = `
const { parentPort, workerData } = require("node:worker_threads");
const bcrypt = require(workerData.bcryptPath);
parentPort.on("message", (job) => {
  try {
    const result = job.op === "hash" ? bcrypt.hashSync(job.password, job.cost) : bcrypt.compareSync(job.password, job.hash);
    parentPort.postMessage({ result });
  } catch (error) {
    parentPort.postMessage({ error: String((error && error.message) || error) });
  }
});
`;

type Slot = { worker: Worker; current: Pending | null };
const slots: Slot[] = [];
const queue: Pending[] = [];

function startSlot(): Slot {
  const worker = new Worker(WORKER_SOURCE, { eval: true, workerData: { bcryptPath: BCRYPT_PATH } });
  worker.unref();
  const slot: Slot = { worker, current: null };
  worker.on("message", (message: { result?: string | boolean; error?: string }) => {
    const done = slot.current;
    slot.current = null;
    if (done) {
      if (message.error !== undefined) done.reject(new Error(message.error));
      else done.resolve(message.result!);
    }
    next(slot);
  });
  worker.on("error", (error) => {
    // A crashed thread fails its job and is replaced; queued jobs go to the new one.
    slot.current?.reject(error);
    slot.current = null;
    const index = slots.indexOf(slot);
    if (index >= 0) slots.splice(index, 1);
    const fresh = startSlot();
    slots.push(fresh);
    next(fresh);
  });
  return slot;
}

function next(slot: Slot) {
  if (slot.current) return;
  const job = queue.shift();
  if (!job) {
    slot.worker.unref();
    return;
  }
  slot.current = job;
  slot.worker.ref();
  slot.worker.postMessage(job.job);
}

function run(job: Job): Promise<string | boolean> {
  while (slots.length < THREADS) slots.push(startSlot());
  if (queue.length >= MAX_WAITING) return Promise.reject(new HashingBusyError("Too many sign-ins at once."));
  return new Promise((resolve, reject) => {
    queue.push({ job, resolve, reject });
    const idle = slots.find((s) => !s.current);
    if (idle) next(idle);
  });
}

export async function hashInPool(password: string, cost: number): Promise<string> {
  return (await run({ op: "hash", password, cost })) as string;
}

export async function compareInPool(password: string, hash: string): Promise<boolean> {
  return (await run({ op: "compare", password, hash })) as boolean;
}
