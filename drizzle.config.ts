import { defineConfig } from "drizzle-kit";
import { databaseUrl } from "./app/utils/db-url";

export default defineConfig({
  dialect: "postgresql",
  schema: "./app/db/schema/index.ts",
  out: "./drizzle",
  dbCredentials: { url: databaseUrl() },
  casing: "snake_case",
  strict: true,
});
