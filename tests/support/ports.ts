/**
 * Ports and databases of a test run, apart from those of `npm start` so both can run at once.
 * DIOPTRA_TEST_SLOT=N (default 0) shifts them all, so several runs can share one machine.
 */
const slot = Number(process.env.DIOPTRA_TEST_SLOT ?? 0);
const suffix = slot ? `_${slot}` : "";

export const UNIT = { db: `dioptra_test${suffix}`, smtp: 2625 + slot * 10, mailApi: 2626 + slot * 10, stripe: 2627 + slot * 10 } as const;
export const E2E = { db: `dioptra_e2e${suffix}`, smtp: 2725 + slot * 10, mailApi: 2726 + slot * 10, app: 3100 + slot * 10, stripe: 2727 + slot * 10 } as const;
export const BUILD_DIR = process.env.DIOPTRA_BUILD_DIR ?? "build";
