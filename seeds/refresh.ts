/**
 * `npm run demo:refresh`: rebuilds the demo diary around the current day, for a demo practice
 * left running for weeks. Only the diary's own appointments (and the exams made for them) from a
 * week ago onwards are replaced; everything else in the database is left as it is.
 */
import { drizzle } from "drizzle-orm/node-postgres";
import pg from "pg";
import * as schema from "../app/db/schema";
import { databaseUrl } from "../app/utils/db-url";
import { buildDiary } from "./diary";

export async function refreshDemo(url = databaseUrl(), now = new Date()) {
  const pool = new pg.Pool({ connectionString: url, max: 1 });
  const db = drizzle(pool, { schema, casing: "snake_case" });
  try {
    return await db.transaction((tx) => buildDiary(tx, now));
  } finally {
    await pool.end();
  }
}

if (import.meta.url === `file://${process.argv[1]}`) {
  refreshDemo()
    .then((made) => console.log(`[demo] diary rebuilt: ${made.appointments} appointments, ${made.exams ?? 0} exams`))
    .catch((error) => {
      console.error("[demo] refresh failed:", error);
      process.exit(1);
    });
}
