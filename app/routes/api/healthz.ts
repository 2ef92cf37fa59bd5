import { sql } from "drizzle-orm";
import { db } from "~/utils/db.server";

/** App and database state, for load balancers and people. 503 when the database is unreachable. */
export async function loader() {
  const started = performance.now();
  try {
    const result = await db.execute<{ now: string; version: string }>(
      sql`select now()::text as now, current_setting('server_version') as version`,
    );
    const row = result.rows[0];
    return Response.json(
      {
        status: "ok",
        app: "dioptra",
        database: { status: "ok", serverVersion: row?.version, latencyMs: Math.round(performance.now() - started) },
      },
      { headers: { "cache-control": "no-store" } },
    );
  } catch (error) {
    return Response.json(
      { status: "degraded", app: "dioptra", database: { status: "unreachable", error: (error as Error).message } },
      { status: 503, headers: { "cache-control": "no-store" } },
    );
  }
}
