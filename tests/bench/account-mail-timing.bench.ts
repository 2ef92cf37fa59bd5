/**
 * Whether /forgot-password and /sign-in-link answer as fast for an address with an account as
 * for one without: starts the production build on a fresh seeded database (behind a pretend
 * proxy, so each request can come from its own client address), then times requests for the
 * demo accounts and for unknown addresses, interleaved. Prints median and p95 of each and the
 * difference of the medians. Each address may have 3 e-mails per 20 minutes, so every address
 * is used at most 3 times. The build must exist (`npm run build`, or DIOPTRA_BUILD_DIR).
 *
 *   DIOPTRA_PG_PORT=54329 tsx tests/bench/account-mail-timing.bench.ts
 */
import { existsSync } from "node:fs";
import { loadavg } from "node:os";
import { join } from "node:path";
import { performance } from "node:perf_hooks";
import { BUILD_DIR } from "../support/ports";
import { freshDatabase, prepareJobQueues, ROOT, startProcess, stopProcess, waitForPort } from "../support/services";

const slot = Number(process.env.DIOPTRA_TEST_SLOT ?? 0);
const PORT = 3106 + slot * 10;
const DB = `dioptra_bench_mail${slot ? `_${slot}` : ""}`;
if (!existsSync(join(ROOT, BUILD_DIR, "server/index.js")))
  throw new Error(`No build in ${BUILD_DIR}: run npm run build first.`);

const KNOWN = {
  "/forgot-password": ["owner@dioptra-demo.test", "optometrist@dioptra-demo.test", "reception@dioptra-demo.test"],
  "/sign-in-link": ["patient@dioptra-demo.test"],
};

function stats(times: number[]) {
  const s = [...times].sort((a, b) => a - b);
  const at = (q: number) => s[Math.min(s.length - 1, Math.ceil(q * s.length) - 1)]!;
  return { n: s.length, median: at(0.5), p95: at(0.95) };
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
  TRUST_PROXY: "1",
});
let client = 0;
async function timed(path: string, email: string) {
  client++;
  const t = performance.now();
  const res = await fetch(`${base}${path}`, {
    method: "POST",
    headers: { "x-forwarded-for": `10.9.${client >> 8}.${client & 255}` },
    body: new URLSearchParams({ email }),
  });
  await res.text();
  if (res.status !== 200) throw new Error(`${path} ${email}: ${res.status}`);
  return performance.now() - t;
}
try {
  await waitForPort(PORT, 60_000);
  for (let i = 0; i < 10; i++) await timed("/forgot-password", `warm-up-${i}@example.test`);
  console.log(`machine load average (1 min): ${loadavg()[0]!.toFixed(2)}`);
  for (const [path, known] of Object.entries(KNOWN)) {
    const k: number[] = [];
    const u: number[] = [];
    for (let round = 0; round < 3; round++) {
      for (const [i, email] of known.entries()) {
        k.push(await timed(path, email));
        u.push(await timed(path, `nobody-${round}-${i}-${Date.now()}@example.test`));
      }
    }
    const a = stats(k);
    const b = stats(u);
    console.log(
      `${path.padEnd(17)} known: median ${a.median.toFixed(1)} ms, p95 ${a.p95.toFixed(1)} ms (${a.n})   unknown: median ${b.median.toFixed(1)} ms, p95 ${b.p95.toFixed(1)} ms (${b.n})   difference of medians ${(a.median - b.median).toFixed(1)} ms`,
    );
  }
} finally {
  await stopProcess(app);
}
