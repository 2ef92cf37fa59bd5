import bcrypt from "bcryptjs";
import { describe, expect, it } from "vitest";
import { compareInPool, HashingBusyError, hashInPool } from "./password-hashing.server";

describe("password hashing in worker threads", () => {
  // Test vectors of the OpenBSD bcrypt algorithm as published with jBCrypt (TestBCrypt.java), from memory.
  it.each([
    ["", "$2a$06$DCq7YPn5Rq63x1Lad4cll.TV4S6ytwfsfvkgY8jIucDrjc8deX1s."],
    ["abc", "$2a$06$If6bvum7DFjUnE9p2uDeDu0YHzrHM6tf.iqN8.yx.jNN1ILEf7h0i"],
  ])("verifies the published vector for %j", async (password, hash) => {
    expect(await compareInPool(password, hash)).toBe(true);
    expect(await compareInPool(`${password}x`, hash)).toBe(false);
  });

  it("hashes what bcryptjs on the main thread verifies, and the other way round", async () => {
    const hash = await hashInPool("correct horse", 4);
    expect(hash).toMatch(/^\$2[ab]\$04\$/);
    expect(bcrypt.compareSync("correct horse", hash)).toBe(true);
    expect(await compareInPool("correct horse", bcrypt.hashSync("correct horse", 4))).toBe(true);
  });

  it("refuses at once, rather than queueing without limit, when many checks arrive together", async () => {
    const hash = bcrypt.hashSync("pw", 8);
    const results = await Promise.allSettled(Array.from({ length: 40 }, () => compareInPool("pw", hash)));
    const refused = results.filter((r) => r.status === "rejected");
    expect(refused.length).toBeGreaterThan(0);
    for (const r of refused) expect((r as PromiseRejectedResult).reason).toBeInstanceOf(HashingBusyError);
    for (const r of results) if (r.status === "fulfilled") expect(r.value).toBe(true);
    // The pool recovers once the line is short again.
    expect(await compareInPool("pw", hash)).toBe(true);
  });
});
