import { describe, expect, it } from "vitest";
import { isDecimalText, parseDecimal } from "./decimal";

describe("parseDecimal", () => {
  it.each([
    ["3", 3],
    ["-0.75", -0.75],
    ["+2.50", 2.5],
    ["\u22121.25", -1.25],
    [".5", 0.5],
    ["12.", 12],
    [" 17 ", 17],
  ])("reads %j as %d", (text, value) => {
    expect(parseDecimal(text)).toBe(value);
    expect(isDecimalText(text)).toBe(true);
  });

  // Number() accepts all of these (ECMAScript StringNumericLiteral: hex, binary, octal, exponent, Infinity, empty → 0).
  it.each([
    "0x10",
    "0b1",
    "0o7",
    "1e1",
    "2E-1",
    "Infinity",
    "-Infinity",
    "NaN",
    "",
    "   ",
    "1,5",
    "1 000",
    "--1",
    "+-1",
    "1.2.3",
    "١٢",
    "0x",
  ])("refuses %j", (text) => {
    expect(parseDecimal(text)).toBeNull();
    expect(isDecimalText(text)).toBe(false);
  });
});
