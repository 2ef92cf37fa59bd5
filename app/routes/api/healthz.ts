import { databaseServerVersion } from "~/utils/health.server";

/** App and database state, for load balancers and people. 503 when the database is unreachable. */
export async function loader() {
  const started = performance.now();
  try {
    const serverVersion = await databaseServerVersion();
    return Response.json(
      {
        status: "ok",
        app: "dioptra",
        database: { status: "ok", serverVersion, latencyMs: Math.round(performance.now() - started) },
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
