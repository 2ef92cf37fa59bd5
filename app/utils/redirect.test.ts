import { describe, expect, it } from "vitest";
import { safeRedirectPath } from "./redirect";

describe("safeRedirectPath", () => {
  it("keeps same-site paths with their query", () => {
    expect(safeRedirectPath("/patients?q=ann", "/")).toBe("/patients?q=ann");
    expect(safeRedirectPath("/portal/book", "/")).toBe("/portal/book");
  });

  // Browsers remove tab, CR and LF from URLs (WHATWG URL standard, "remove all ASCII tab or
  // newline"), so "/\t/evil.example" would become the protocol-relative "//evil.example".
  it.each([
    "//evil.example",
    "/\t/evil.example",
    "/\r\n/evil.example",
    "/\n/evil.example",
    "\t//evil.example",
    "/\\evil.example",
    "\\\\evil.example",
    "/%09/evil.example".replace("%09", "\t"),
    "https://evil.example/",
    "javascript:alert(1)",
    " /patients",
    "patients",
    "",
    "/pa tients",
  ])("refuses %j", (to) => {
    expect(safeRedirectPath(to, "/")).toBe("/");
  });

  it("refuses non-strings", () => {
    expect(safeRedirectPath(undefined, "/portal")).toBe("/portal");
    expect(safeRedirectPath(["/a"], "/portal")).toBe("/portal");
  });
});
