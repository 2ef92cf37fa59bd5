import { drizzle } from "drizzle-orm/node-postgres";
import pg from "pg";
import * as schema from "~/db/schema";
import { env } from "./env.server";

declare global {
  // Reused across dev-server reloads so connections are not leaked.
  var __dioptraPool: pg.Pool | undefined;
}

export const pool = (globalThis.__dioptraPool ??= new pg.Pool({
  connectionString: env.DATABASE_URL,
  max: Number(process.env.DIOPTRA_PG_POOL ?? 10),
}));

export const db = drizzle(pool, { schema, casing: "snake_case" });
export type Db = typeof db;
export type Tx = Parameters<Parameters<Db["transaction"]>[0]>[0];

/** A read's result: a query (run when awaited) or a function that starts one. */
type Settled<T> = T extends () => infer R ? Awaited<R> : Awaited<T>;

/**
 * Independent reads, at once on the pool; on a transaction one after another, since its one
 * connection answers one query at a time (pg refuses queries sent while one is running). Pass
 * Drizzle queries as they are (they start when awaited) and anything else as a function.
 */
export async function allOf<const T extends readonly unknown[]>(
  conn: Db | Tx,
  reads: T,
): Promise<{ -readonly [K in keyof T]: Settled<T[K]> }> {
  const start = (r: unknown) => (typeof r === "function" ? (r as () => unknown)() : r);
  if (conn === db) return (await Promise.all(reads.map(start))) as never;
  const out: unknown[] = [];
  for (const r of reads) out.push(await start(r));
  return out as never;
}
