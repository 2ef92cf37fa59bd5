import { describe, expect, it } from "vitest";
import { inRequestScope, requestMemo } from "./request-scope.server";

describe("requestMemo", () => {
  it("makes a value once per key within a request, and anew in each request", async () => {
    let made = 0;
    const make = async () => ++made;
    const first = await inRequestScope(async () => {
      const [a, b] = await Promise.all([requestMemo("user", make), requestMemo("user", make)]);
      const c = await requestMemo("other", make);
      return [a, b, c];
    });
    expect(first).toEqual([1, 1, 2]);
    expect(await inRequestScope(() => requestMemo("user", make))).toBe(3);
  });

  it("outside a request makes the value every time", async () => {
    let made = 0;
    const make = async () => ++made;
    expect([await requestMemo("user", make), await requestMemo("user", make)]).toEqual([1, 2]);
  });

  it("does not keep a failed read: the next caller asks again", async () => {
    let calls = 0;
    const flaky = async () => {
      calls++;
      if (calls === 1) throw new Error("connection reset");
      return "ok";
    };
    const got = await inRequestScope(async () => {
      await expect(requestMemo("user", flaky)).rejects.toThrow("connection reset");
      return requestMemo("user", flaky);
    });
    expect(got).toBe("ok");
    expect(calls).toBe(2);
  });
});
