import { fileURLToPath } from "node:url";
import { reactRouter } from "@react-router/dev/vite";
import tailwindcss from "@tailwindcss/vite";
import { defineConfig } from "vitest/config";

const alias = {
  "~": fileURLToPath(new URL("./app", import.meta.url)),
  "#tests": fileURLToPath(new URL("./tests", import.meta.url)),
};

// Vitest runs without the React Router plugin (it would try to build the app);
// the same file serves both so the alias is declared once.
const isVitest = Boolean(process.env.VITEST);
// Longest browser files first (loaded only under Vitest: the app's build has no use for it).
const sequencer = isVitest ? (await import("./tests/support/sequencer")).default : undefined;

// Test files at once: unit and integration files (each worker on its own copy of the test
// database), then browser files (each on its own stack; see tests/e2e/global-setup.ts).
const unitWorkers = Number(process.env.DIOPTRA_TEST_WORKERS ?? 3);
const e2eWorkers = Number(process.env.DIOPTRA_E2E_STACKS ?? 2);

export default defineConfig({
  plugins: isVitest ? [] : [tailwindcss(), reactRouter()],
  resolve: { alias },
  server: { host: "127.0.0.1", port: 3000 },
  test: {
    sequence: { sequencer },
    projects: [
      {
        resolve: { alias },
        test: {
          name: "unit",
          include: ["app/**/*.test.ts", "app/**/*.test.tsx", "tests/integration/**/*.test.ts"],
          environment: "node",
          maxWorkers: unitWorkers,
          sequence: { groupOrder: 0 },
          globalSetup: ["tests/support/global-setup.ts"],
          setupFiles: ["tests/support/setup.ts"],
          testTimeout: 20_000,
          hookTimeout: 60_000,
        },
      },
      {
        resolve: { alias },
        test: {
          name: "e2e",
          include: ["tests/e2e/**/*.e2e.ts"],
          environment: "node",
          globalSetup: ["tests/e2e/global-setup.ts"],
          setupFiles: ["tests/e2e/setup.ts"],
          // A page or the job worker answering a little late is not a failure: polls wait up to 10 s.
          expect: { poll: { timeout: 10_000 } },
          maxWorkers: e2eWorkers,
          sequence: { groupOrder: 1 },
          // Two browsers, two app servers and their workers share two cores: long flows need room.
          testTimeout: 120_000,
          hookTimeout: 600_000,
        },
      },
    ],
  },
});
