/**
 * Jobs queued with `enqueue(name, data, { tx })` live and die with the transaction that queued
 * them: pg-boss writes the job row through the transaction's own connection.
 */
import { eq, sql } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { patients } from "~/db/schema";
import { db } from "~/utils/db.server";
import { defineJob, getBoss, stopJobs } from "~/utils/jobs.server";
import { uniq } from "#tests/support/factories";

// A queue of this test's own, with a handler no worker ever runs (none is started here).
const probe = defineJob<{ marker: string }>("test-transaction-probe", async () => undefined);

beforeAll(async () => {
  // Queues exist before any transaction queues into them (see prepareJobQueues).
  const boss = await getBoss();
  if (!(await boss.getQueue(probe.name))) await boss.createQueue(probe.name, { name: probe.name });
});
afterAll(async () => {
  await db.execute(sql`delete from pgboss.job where name = ${probe.name}`);
  await stopJobs();
});

const jobsWith = async (marker: string) =>
  (
    await db.execute<{ id: string }>(
      sql`select id from pgboss.job where name = ${probe.name} and data->>'marker' = ${marker}`,
    )
  ).rows;

describe("a job queued inside a transaction", () => {
  it("is rolled back with the transaction, together with the write that caused it", async () => {
    const marker = uniq();
    let jobId: string | null = null;
    let patientId = "";
    await expect(
      db.transaction(async (tx) => {
        const [p] = await tx
          .insert(patients)
          .values({ firstName: "Rollback", lastName: `Case-${marker}`, dateOfBirth: "1980-01-01" })
          .returning();
        patientId = p!.id;
        jobId = await probe.enqueue({ marker }, { tx });
        // Inside the transaction the job is there …
        expect(
          (await tx.execute<{ id: string }>(sql`select id from pgboss.job where id = ${jobId}`)).rows,
        ).toHaveLength(1);
        throw new Error("refused after queueing");
      }),
    ).rejects.toThrow("refused after queueing");
    expect(jobId).toMatch(/^[0-9a-f-]{36}$/);
    // … and after the rollback neither the row nor the job exists.
    expect(await db.select().from(patients).where(eq(patients.id, patientId))).toHaveLength(0);
    expect(await jobsWith(marker)).toEqual([]);
  });

  it("is kept when the transaction commits (the same call, so the rollback above is not a job never sent)", async () => {
    const marker = uniq();
    const jobId = await db.transaction(async (tx) => {
      await tx.insert(patients).values({ firstName: "Commit", lastName: `Case-${marker}`, dateOfBirth: "1980-01-01" });
      return probe.enqueue({ marker }, { tx });
    });
    expect(await jobsWith(marker)).toEqual([{ id: jobId }]);
  });

  it("is not seen by other connections before the transaction commits", async () => {
    const marker = uniq();
    await db.transaction(async (tx) => {
      await probe.enqueue({ marker }, { tx });
      // `db` outside the transaction is another connection of the pool.
      expect(await jobsWith(marker)).toEqual([]);
    });
    expect(await jobsWith(marker)).toHaveLength(1);
  });
});
