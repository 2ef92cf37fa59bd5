/**
 * The job worker: runs the handlers of every queue declared in app/utils/job-list.server.ts.
 * Started beside the web server by `npm start` (and by the browser tests). Jobs live in
 * PostgreSQL, so a worker that stops loses nothing: another (or this one, restarted) picks them up.
 * It answers GET /healthz on WORKER_PORT (default 2527): the port opens at once (the start
 * scripts wait for it) and the answer says whether the queues are being worked yet.
 */
import { createServer } from "node:http";
import { definedJobs, startWorkers, stopJobs } from "../utils/jobs.server";
import "../utils/job-list.server";

const port = Number(process.env.WORKER_PORT ?? 2527);
let working = false;

const health = createServer((_req, res) => {
  res.writeHead(working ? 200 : 503, { "content-type": "application/json" });
  res.end(JSON.stringify({ ok: working, queues: definedJobs() }));
});

async function main() {
  await new Promise<void>((resolve) => health.listen(port, "127.0.0.1", resolve));
  await startWorkers(definedJobs(), { pollingIntervalSeconds: Number(process.env.WORKER_POLL_SECONDS ?? 1) });
  working = true;
  console.log(`[worker] running ${definedJobs().join(", ")}; health on 127.0.0.1:${port}`);
  const shutdown = async () => {
    health.close();
    await stopJobs().catch(() => undefined);
    process.exit(0);
  };
  process.on("SIGTERM", shutdown);
  process.on("SIGINT", shutdown);
}

main().catch((error) => {
  console.error("[worker] failed to start:", error);
  process.exit(1);
});
