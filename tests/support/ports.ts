/**
 * Ports and databases of a test run, apart from those of `npm start` so both can run at once.
 * DIOPTRA_TEST_SLOT=N (default 0) shifts them all, so several runs can share one machine.
 */
const slot = Number(process.env.DIOPTRA_TEST_SLOT ?? 0);
const suffix = slot ? `_${slot}` : "";

/** The run's freshly migrated and seeded database; every test database is a copy of it (no one connects to it). */
export const TEMPLATE_DB = `dioptra_template${suffix}`;

export const UNIT = {
  db: `dioptra_test${suffix}`,
  smtp: 2625 + slot * 10,
  mailApi: 2626 + slot * 10,
  stripe: 2627 + slot * 10,
  s3: 2628 + slot * 10,
  s3Spare: 2629 + slot * 10,
} as const;
// The worker's health port is smtp + 3 (2728).
export const E2E = {
  db: `dioptra_e2e${suffix}`,
  smtp: 2725 + slot * 10,
  mailApi: 2726 + slot * 10,
  app: 3100 + slot * 10,
  stripe: 2727 + slot * 10,
  s3: 2729 + slot * 10,
  worker: 2728 + slot * 10,
} as const;

/**
 * Browser test files run in parallel, each Vitest worker against its own stack (database, app
 * server, job worker and stand-ins). Stack 0 keeps the ports above; stack n (1-9) takes
 * 4100 + slot * 100 + n * 10 and the five ports after it.
 */
export function e2eStackPorts(n: number) {
  if (n === 0) return E2E;
  const base = 4100 + slot * 100 + n * 10;
  return {
    db: `${E2E.db}_w${n}`,
    app: base,
    smtp: base + 1,
    mailApi: base + 2,
    stripe: base + 3,
    s3: base + 4,
    worker: base + 5,
  } as const;
}
/** The scale-out test's own stack: two app servers and nginx in front, two workers and the stand-ins. */
export const SCALE = {
  db: `dioptra_scale${suffix}`,
  smtp: 2825 + slot * 10,
  mailApi: 2826 + slot * 10,
  stripe: 2827 + slot * 10,
  s3: 2828 + slot * 10,
  workers: [2829 + slot * 10, 2830 + slot * 10],
  apps: [3101 + slot * 10, 3102 + slot * 10],
  balancer: 3103 + slot * 10,
} as const;
export const BUILD_DIR = process.env.DIOPTRA_BUILD_DIR ?? "build";
