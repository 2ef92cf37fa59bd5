import { sql } from "drizzle-orm";
import { db } from "./db.server";

/** The database server's version, read with a round trip; throws when the database cannot be reached. */
export async function databaseServerVersion() {
  const result = await db.execute<{ now: string; version: string }>(
    sql`select now()::text as now, current_setting('server_version') as version`,
  );
  return result.rows[0]?.version;
}
