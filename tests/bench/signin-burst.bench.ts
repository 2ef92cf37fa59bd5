/**
 * Responsiveness under a sign-in flood: starts the production build (react-router-serve) on a
 * fresh seeded database, then sends 100 unauthenticated sign-in attempts with wrong passwords at
 * once (one client, a mix of real and unknown accounts) while `/healthz` is polled every 25 ms.
 * Prints the health check's median, p95 and max latency during the burst, how long the burst
 * took, and the status codes the burst got. The build must exist (`npm run build`, or the
 * folder in DIOPTRA_BUILD_DIR).
 *
 *   DIOPTRA_PG_PORT=54329 tsx tests/bench/signin-burst.bench.ts
 *   BENCH_ATTEMPTS=200 tsx tests/bench/signin-burst.bench.ts
 */
import { existsSync } from "node:fs";
import { loadavg } from "node:os";
import { join } from "node:path";
import { performance } from "node:perf_hooks";
import { BUILD_DIR } from "../support/ports";
import { freshDatabase, prepareJobQueues, ROOT, startProcess, stopProcess, waitForPort } from "../support/services";

const ATTEMPTS = Number(process.env.BENCH_ATTEMPTS ?? 100);
const slot = Number(process.env.DIOPTRA_TEST_SLOT ?? 0);
const PORT = 3105 + slot * 10;
const DB = `dioptra_bench_signin${slot ? `_${slot}` : ""}`;

if (!existsSync(join(ROOT, BUILD_DIR, "server/index.js")))
  throw new Error(`No build in ${BUILD_DIR}: run npm run build first.`);

function stats(times: number[]) {
  const s = [...times].sort((a, b) => a - b);
  const at = (q: number) => s[Math.min(s.length - 1, Math.ceil(q * s.length) - 1)]!;
  return { n: s.length, median: at(0.5), p95: at(0.95), max: s[s.length - 1]! };
}

const databaseUrl = await freshDatabase(DB);
await prepareJobQueues(databaseUrl);
const base = `http://127.0.0.1:${PORT}`;
const app = startProcess("app", join(ROOT, "node_modules/.bin/react-router-serve"), [`${BUILD_DIR}/server/index.js`], {
  NODE_ENV: "production",
  HOST: "127.0.0.1",
  PORT: String(PORT),
  APP_URL: base,
  DATABASE_URL: databaseUrl,
  DIOPTRA_DEMO: "1",
});
try {
  await waitForPort(PORT, 60_000);
  // Warm up: the first requests load modules and open database connections.
  for (let i = 0; i < 20; i++) await (await fetch(`${base}/healthz`)).text();
  const idle: number[] = [];
  for (let i = 0; i < 40; i++) {
    const t = performance.now();
    await (await fetch(`${base}/healthz`)).text();
    idle.push(performance.now() - t);
  }

  const statuses = new Map<number, number>();
  let done = false;
  const health: number[] = [];
  const poller = (async () => {
    while (!done) {
      const t = performance.now();
      await (await fetch(`${base}/healthz`)).text();
      health.push(performance.now() - t);
      await new Promise((r) => setTimeout(r, 25));
    }
  })();
  const emails = [
    "owner@dioptra-demo.test",
    "optometrist@dioptra-demo.test",
    "nobody@dioptra-demo.test",
    "someone-else@example.test",
  ];
  const started = performance.now();
  await Promise.all(
    Array.from({ length: ATTEMPTS }, async (_, i) => {
      const res = await fetch(`${base}/login`, {
        method: "POST",
        body: new URLSearchParams({ email: emails[i % emails.length]!, password: `wrong-guess-${i}` }),
        redirect: "manual",
      });
      await res.text();
      statuses.set(res.status, (statuses.get(res.status) ?? 0) + 1);
    }),
  );
  const burstMs = performance.now() - started;
  done = true;
  await poller;

  const i = stats(idle);
  const h = stats(health);
  console.log(`machine load average (1 min): ${loadavg()[0]!.toFixed(2)}`);
  console.log(
    `/healthz idle:         median ${i.median.toFixed(1)} ms   p95 ${i.p95.toFixed(1)} ms   max ${i.max.toFixed(1)} ms   (${i.n} requests)`,
  );
  console.log(
    `/healthz during burst: median ${h.median.toFixed(1)} ms   p95 ${h.p95.toFixed(1)} ms   max ${h.max.toFixed(1)} ms   (${h.n} requests)`,
  );
  console.log(
    `${ATTEMPTS} sign-in attempts took ${burstMs.toFixed(0)} ms; statuses: ${[...statuses.entries()].map(([s, n]) => `${s}×${n}`).join(", ")}`,
  );
} finally {
  await stopProcess(app);
}
