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

export default defineConfig({
  plugins: isVitest ? [] : [tailwindcss(), reactRouter()],
  resolve: { alias },
  server: { host: "127.0.0.1", port: 3000 },
  test: {
    projects: [
      {
        resolve: { alias },
        test: {
          name: "unit",
          include: ["app/**/*.test.ts", "app/**/*.test.tsx", "tests/integration/**/*.test.ts"],
          environment: "node",
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
          fileParallelism: false,
          testTimeout: 60_000,
          hookTimeout: 600_000,
        },
      },
    ],
  },
});
