/**
 * `allOf` runs independent reads at once on the pool and one after another on a transaction:
 * a transaction's one connection answers one query at a time, and pg refuses (and now warns
 * about) a query sent while another is still running on the same client.
 */
import { sql } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { allOf, db, type Tx } from "~/utils/db.server";

/** A read that sleeps in the database and notes when it began and ended. */
function timedRead(conn: typeof db | Tx, log: { name: string; at: "start" | "end" }[], name: string) {
  return async () => {
    log.push({ name, at: "start" });
    const { rows } = await conn.execute<{ v: string }>(sql`select ${name}::text as v from pg_sleep(0.05)`);
    log.push({ name, at: "end" });
    return rows[0]!.v;
  };
}

describe("allOf", () => {
  it("overlaps reads on the pool, keeping the results in order", async () => {
    const log: { name: string; at: "start" | "end" }[] = [];
    const out = await allOf(db, [timedRead(db, log, "a"), timedRead(db, log, "b")]);
    expect(out).toEqual(["a", "b"]);
    expect(log.slice(0, 2)).toEqual([
      { name: "a", at: "start" },
      { name: "b", at: "start" },
    ]);
  });

  it("runs reads on a transaction one after another, Drizzle queries and functions alike", async () => {
    const log: { name: string; at: "start" | "end" }[] = [];
    const out = await db.transaction(async (tx) =>
      allOf(tx, [timedRead(tx, log, "a"), tx.execute<{ n: number }>(sql`select 2 as n`), timedRead(tx, log, "c")]),
    );
    expect(out[0]).toBe("a");
    expect(out[1].rows[0]!.n).toBe(2);
    expect(out[2]).toBe("c");
    expect(log).toEqual([
      { name: "a", at: "start" },
      { name: "a", at: "end" },
      { name: "c", at: "start" },
      { name: "c", at: "end" },
    ]);
  });
});
