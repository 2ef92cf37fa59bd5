/**
 * Calendar API benchmark: a week's events for the whole practice from GET /api/appointments,
 * with 1,000,000 appointments in the database. Target: p95 under 30 ms of server time.
 *
 *   tsx tests/bench/appointments.bench.ts                  # 1,000,000 appointments
 *   BENCH_APPOINTMENTS=50000 tsx tests/bench/appointments.bench.ts   # quick smoke run
 *
 * Uses its own database (dioptra_bench on the local cluster, re-created each run unless
 * BENCH_KEEP=1 finds it already filled), migrated and seeded like the app's, then filled with
 * SQL generate_series. Server time is measured around the route's loader, called in-process
 * exactly as React Router calls it (session check, query, JSON), without network or browser.
 */
import { cpus, loadavg } from "node:os";
import pg from "pg";
import { runMigrations } from "../../app/ops/migrate";
import { seed } from "../../seeds/seed";
import { testDatabaseUrl } from "../support/services";

const N = Number(process.env.BENCH_APPOINTMENTS ?? 1_000_000);
const RUNS = Number(process.env.BENCH_RUNS ?? 300);
// Ten providers: Dioptra is made for practices of one to ten optometrists.
const PROVIDERS = Number(process.env.BENCH_PROVIDERS ?? 10);
const SLOTS_PER_DAY = 16; // 09:00–17:00 in 30-minute appointments
const TARGET_P95_MS = 30;
const DB = process.env.BENCH_DB ?? "dioptra_bench";

async function admin(sql: string) {
  const url = new URL(testDatabaseUrl("postgres"));
  const c = new pg.Client({ connectionString: url.toString() });
  await c.connect();
  try {
    return await c.query(sql);
  } finally {
    await c.end();
  }
}

async function prepare(url: string) {
  // The database may not exist yet (a first run): then there is nothing to reuse.
  const c = new pg.Client({ connectionString: url });
  const connected = await c.connect().then(
    () => true,
    () => false,
  );
  try {
    const existing = connected ? await c.query("select count(*)::int as n from appointments").catch(() => null) : null;
    if (process.env.BENCH_KEEP === "1" && existing && existing.rows[0].n >= N) {
      console.log(`using the ${existing.rows[0].n.toLocaleString("en-GB")} appointments already in ${DB}`);
      return;
    }
  } finally {
    if (connected) await c.end();
  }
  await admin(`drop database if exists "${DB}" with (force)`);
  await admin(`create database "${DB}"`);
  await runMigrations(url);
  await seed(url);
  const db = new pg.Client({ connectionString: url });
  await db.connect();
  try {
    const t0 = performance.now();
    await db.query("set time zone 'Europe/London'");
    await db.query(`insert into users (email, name, role, password_hash)
      select 'bench-optom-' || g || '@dioptra-demo.test', 'Bench Optometrist ' || g, 'optometrist', null from generate_series(1, ${PROVIDERS}) g`);
    await db.query(`insert into patients (first_name, last_name, date_of_birth, email)
      select 'Bench', 'Patient ' || g, date '1950-01-01' + (g % 20000), 'bench-' || g || '@dioptra-demo.test' from generate_series(1, 20000) g`);
    // One appointment per provider per half-hour from 09:00 local, every day from 2022-01-03 on.
    const batch = 200_000;
    for (let from = 0; from < N; from += batch) {
      const to = Math.min(N, from + batch) - 1;
      await db.query(`
        with prov as (select array_agg(id order by email) ids from users where email like 'bench-optom-%'),
             pat as (select array_agg(id) ids from patients where first_name = 'Bench'),
             typ as (select id from appointment_types order by name limit 1)
        insert into appointments (patient_id, provider_id, appointment_type_id, starts_at, ends_at, status)
        select pat.ids[1 + (g % 20000)], prov.ids[1 + (g % ${PROVIDERS})], typ.id, s.t, s.t + interval '30 minutes',
               (array['booked','confirmed','completed','completed','cancelled','no_show']::appointment_status[])[1 + (g % 6)]
          from generate_series(${from}, ${to}) g, prov, pat, typ,
               lateral (select (timestamp '2022-01-03 09:00' + ((g / ${PROVIDERS}) / ${SLOTS_PER_DAY}) * interval '1 day'
                                 + ((g / ${PROVIDERS}) % ${SLOTS_PER_DAY}) * interval '30 minutes') at time zone 'Europe/London' as t) s`);
      process.stdout.write(
        `\r  inserted ${(to + 1).toLocaleString("en-GB")} / ${N.toLocaleString("en-GB")} appointments`,
      );
    }
    await db.query("analyze");
    console.log(`\n  filled in ${((performance.now() - t0) / 1000).toFixed(1)} s`);
  } finally {
    await db.end();
  }
}

function percentile(sorted: number[], p: number) {
  return sorted[Math.min(sorted.length - 1, Math.ceil((p / 100) * sorted.length) - 1)]!;
}

async function main() {
  const url = testDatabaseUrl(DB);
  console.log(`preparing ${DB} with ${N.toLocaleString("en-GB")} appointments`);
  await prepare(url);
  process.env.DATABASE_URL = url;
  process.env.DIOPTRA_DEMO = "1";
  const { loader } = await import("../../app/routes/api/appointments");
  const { createUserSession } = await import("../../app/utils/session.server");
  const { db } = await import("../../app/utils/db.server");
  const { users } = await import("../../app/db/schema");
  const { eq } = await import("drizzle-orm");
  const [desk] = await db.select().from(users).where(eq(users.email, "reception@dioptra-demo.test"));
  const cookie = (await createUserSession(new Request("http://127.0.0.1/login"), desk!.id, "/")).headers
    .get("set-cookie")!
    .split(";")[0]!;

  const days = Math.floor(N / PROVIDERS / SLOTS_PER_DAY);
  const weeks = Math.max(1, Math.floor(days / 7) - 1);
  const call = async (week: number) => {
    const start = new Date(Date.UTC(2022, 0, 3 + week * 7));
    const end = new Date(start.getTime() + 7 * 86_400_000);
    // As the calendar asks: wall times in the practice zone, whole practice.
    const q = `start=${start.toISOString().slice(0, 10)}T00:00:00&end=${end.toISOString().slice(0, 10)}T00:00:00&provider=all&timeZone=Europe%2FLondon`;
    const request = new Request(`http://127.0.0.1:3000/api/appointments?${q}`, { headers: { cookie } });
    const t0 = performance.now();
    const res = (await loader({ request, params: {}, context: {} } as never)) as Response;
    const body = await res.text();
    const ms = performance.now() - t0;
    if (res.status !== 200) throw new Error(`status ${res.status}: ${body.slice(0, 200)}`);
    return { ms, events: (JSON.parse(body) as { events: unknown[] }).events.length };
  };
  let seedN = 12345;
  const rand = () => (seedN = (seedN * 1103515245 + 12345) % 2 ** 31) / 2 ** 31;
  for (let i = 0; i < 20; i++) await call(Math.floor(rand() * weeks)); // warm-up
  const times: number[] = [];
  let events = 0;
  for (let i = 0; i < RUNS; i++) {
    const r = await call(Math.floor(rand() * weeks));
    times.push(r.ms);
    events += r.events;
  }
  times.sort((a, b) => a - b);
  const median = percentile(times, 50);
  const p95 = percentile(times, 95);
  console.log(
    `GET /api/appointments, one week, whole practice (${PROVIDERS} providers), ${N.toLocaleString("en-GB")} appointments in the table`,
  );
  console.log(`  ${RUNS} requests over random weeks, ${Math.round(events / RUNS)} events each on average`);
  console.log(
    `  machine: ${cpus().length} CPUs, load average ${loadavg()
      .map((l) => l.toFixed(1))
      .join(" / ")} (other work on the machine inflates the tail)`,
  );
  console.log(
    `  median ${median.toFixed(2)} ms   p95 ${p95.toFixed(2)} ms   max ${times.at(-1)!.toFixed(2)} ms   (target p95 < ${TARGET_P95_MS} ms: ${p95 < TARGET_P95_MS ? "met" : "NOT met"})`,
  );
  await (await import("../../app/utils/db.server")).pool.end();
}

main().catch((error) => {
  console.error(error);
  process.exit(1);
});
