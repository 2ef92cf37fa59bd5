import type { Config } from "@react-router/dev/config";

export default {
  appDirectory: "app",
  // Several test runs on one machine build into separate folders (see tests/support/ports.ts).
  buildDirectory: process.env.DIOPTRA_BUILD_DIR ?? "build",
  ssr: true,
  future: {
    v8_middleware: true,
  },
} satisfies Config;
