import { describe, expect, it } from "vitest";
import { DomainError, failureReply, invariantResponse, notFound } from "./failure.server";

class ShelfError extends DomainError {}

type DataResult = { type: string; data: unknown; init: { status: number } | null };

function thrown(fn: () => unknown): DataResult {
  try {
    fn();
  } catch (error) {
    return error as DataResult;
  }
  throw new Error("nothing was thrown");
}

describe("one way to fail", () => {
  it("a domain error carries its message, status and the field at fault", () => {
    const e = new ShelfError("The frame is out of stock.", { status: 409, field: "frameId" });
    expect(e).toBeInstanceOf(DomainError);
    expect(e.name).toBe("ShelfError");
    expect(e.status).toBe(409);
    expect(e.field).toBe("frameId");
    expect(e.fieldErrors).toEqual({ frameId: ["The frame is out of stock."] });
    expect(new DomainError("Bad.").status).toBe(400);
  });

  it("failureReply turns a domain error into a form reply and re-throws anything else", () => {
    const reply = failureReply(new ShelfError("Give a PD.", { status: 422, field: "pd" })) as unknown as DataResult;
    expect(reply.init?.status).toBe(422);
    expect(reply.data).toEqual({ ok: false, error: "Give a PD.", fieldErrors: { pd: ["Give a PD."] } });
    const bug = new TypeError("x is undefined");
    expect(() => failureReply(bug)).toThrow(bug);
  });

  it("invariantResponse and notFound throw responses with their status", () => {
    expect(() => invariantResponse(true, "never")).not.toThrow();
    expect(thrown(() => invariantResponse(false, "Choose a site.", 422))).toMatchObject({
      data: { error: "Choose a site." },
      init: { status: 422 },
    });
    expect(thrown(() => notFound())).toMatchObject({ init: { status: 404 } });
  });
});
