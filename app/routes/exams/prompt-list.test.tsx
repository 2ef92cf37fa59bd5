// @vitest-environment jsdom
import { cleanup, render, screen } from "@testing-library/react";
import { afterEach, describe, expect, it } from "vitest";
import { referralPrompts, type ReferralPrompt } from "~/lib/optics";
import { PromptList } from "./exam-form";

afterEach(cleanup);

describe("the exam's prompt list", () => {
  it("shows advice to repeat a non-contact pressure apart from referral prompts, in words that say so", () => {
    // NICE NG81 1.1.1–1.1.2: a non-contact reading alone is not a reason to refer; repeat by applanation.
    const prompts: ReferralPrompt[] = referralPrompts({
      iop: { right: { readings: [26], method: "non-contact" }, left: { readings: [27, 26], method: "applanation" } },
    });
    expect(prompts.map((p) => p.action).sort()).toEqual(["consider referral", "repeat measurement"]);
    render(<PromptList prompts={prompts} />);
    const refer = screen.getByTestId("referral-prompts");
    const repeat = screen.getByTestId("repeat-advice");
    expect(refer.textContent).toMatch(/Referral prompt: Left/);
    expect(refer.textContent).not.toMatch(/Right IOP/);
    expect(repeat.textContent).toMatch(/Repeat the measurement: Right IOP 26/);
    expect(repeat.textContent).toContain("not a referral prompt");
    expect(repeat.textContent).not.toContain("Referral prompt:");
  });
});
