import { drizzle } from "drizzle-orm/node-postgres";
import { migrate } from "drizzle-orm/node-postgres/migrator";
import pg from "pg";
import { databaseUrl } from "../utils/db-url";

/** Applies the committed migrations under drizzle/ to the database. */
export async function runMigrations(url = databaseUrl()) {
  const pool = new pg.Pool({ connectionString: url, max: 1 });
  try {
    await migrate(drizzle(pool), { migrationsFolder: new URL("../../drizzle", import.meta.url).pathname });
  } finally {
    await pool.end();
  }
}

if (import.meta.url === `file://${process.argv[1]}`) {
  runMigrations()
    .then(() => console.log("[db] migrations applied"))
    .catch((error) => {
      console.error("[db] migration failed:", error);
      process.exit(1);
    });
}
