import { readdirSync, readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import * as optics from "./index";

describe("public entry", () => {
  it("exports the contract", () => {
    for (const name of [
      "RxError",
      "parseRx",
      "formatRx",
      "transpose",
      "sphericalEquivalent",
      "toPowerVector",
      "fromPowerVector",
      "blurStrength",
      "compareRx",
      "vertexConvert",
      "roundRx",
      "combine",
      "prenticePrism",
      "toLogMAR",
      "fromLogMAR",
      "checkDispensing",
    ]) {
      expect(typeof (optics as Record<string, unknown>)[name], name).toBe("function");
    }
    expect(new optics.RxError("x")).toBeInstanceOf(Error);
    expect(new optics.AcuityError("x")).toBeInstanceOf(optics.RxError);
  });

  it("engine sources use no Node-only or framework imports (they run in the browser)", () => {
    const dir = new URL(".", import.meta.url);
    const sources = readdirSync(dir).filter(
      (f) => f.endsWith(".ts") && !f.endsWith(".test.ts") && f !== "test-arbitraries.ts",
    );
    expect(sources.length).toBeGreaterThan(5);
    for (const file of sources) {
      const text = readFileSync(new URL(file, dir), "utf8");
      const imports = [...text.matchAll(/from\s+"([^"]+)"/g)].map((m) => m[1]);
      for (const specifier of imports) expect(specifier, `${file} imports ${specifier}`).toMatch(/^\.\//);
      expect(text, file).not.toMatch(/\b(?:process|require|Buffer|__dirname)\b/);
    }
  });
});
