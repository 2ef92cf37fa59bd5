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
