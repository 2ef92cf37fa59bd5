/** Ports of the test run, apart from those of `npm start` so both can run at once. */
export const UNIT = { db: "dioptra_test", smtp: 2625, mailApi: 2626 } as const;
export const E2E = { db: "dioptra_e2e", smtp: 2725, mailApi: 2726, app: 3100 } as const;
