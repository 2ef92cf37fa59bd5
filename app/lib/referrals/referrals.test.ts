import { describe, expect, it } from "vitest";
import {
  canChase,
  describeTimeFrame,
  displayStatus,
  dueBy,
  sendProblems,
  urgencyOverrideProblem,
  type ReferralState,
} from "./index";

const sent = (over: Partial<ReferralState> = {}): ReferralState => ({
  status: "sent",
  sentAt: new Date("2026-03-01T10:00:00Z"),
  appointmentOn: null,
  timeFrameDays: 7,
  ...over,
});

describe("referral status", () => {
  it("is due the time frame after sending", () => {
    expect(dueBy(sent())?.toISOString()).toBe("2026-03-08T10:00:00.000Z");
    expect(dueBy(sent({ sentAt: null }))).toBeNull();
  });

  it("turns overdue only after the time frame has passed without the patient being seen", () => {
    expect(displayStatus(sent(), new Date("2026-03-08T09:59:00Z"))).toBe("sent");
    expect(displayStatus(sent(), new Date("2026-03-08T10:01:00Z"))).toBe("overdue");
    expect(displayStatus(sent({ status: "acknowledged" }), new Date("2026-03-09T00:00:00Z"))).toBe("overdue");
  });

  it("counts an appointment date that has arrived as seen, in the practice's time zone", () => {
    const r = sent({ status: "acknowledged", appointmentOn: "2026-03-20" });
    expect(displayStatus(r, new Date("2026-03-19T23:30:00Z"), "Europe/London")).toBe("overdue");
    // 23:30 UTC on the 19th is already the 20th in Auckland.
    expect(displayStatus(r, new Date("2026-03-19T23:30:00Z"), "Pacific/Auckland")).toBe("seen");
    expect(displayStatus(r, new Date("2026-03-21T12:00:00Z"))).toBe("seen");
  });

  it("never reports drafts, queued, withdrawn or replied referrals as overdue", () => {
    const late = new Date("2027-01-01T00:00:00Z");
    for (const status of ["draft", "queued", "withdrawn", "replied"] as const)
      expect(displayStatus(sent({ status }), late)).toBe(status);
  });

  it("allows a chaser only when overdue and not chased in the last three days", () => {
    const now = new Date("2026-03-20T10:00:00Z");
    expect(canChase({ ...sent(), lastChasedAt: null }, now)).toBe(true);
    expect(canChase({ ...sent(), lastChasedAt: new Date("2026-03-19T10:00:00Z") }, now)).toBe(false);
    expect(canChase({ ...sent(), lastChasedAt: new Date("2026-03-17T10:00:00Z") }, now)).toBe(true);
    expect(canChase({ ...sent({ timeFrameDays: 91 }), lastChasedAt: null }, now)).toBe(false);
  });

  it("words the time frames", () => {
    expect(describeTimeFrame("same_day", 1)).toBe("to be seen the same day");
    expect(describeTimeFrame("urgent", 7)).toBe("to be seen within 7 days");
    expect(describeTimeFrame("soon", 28)).toBe("to be seen within 4 weeks");
    expect(describeTimeFrame("routine", 91)).toBe("to be seen within 13 weeks");
  });

  it("asks for a recipient e-mail, findings, a reason and a signed exam before sending", () => {
    const ok = {
      recipientEmail: "a@b.test",
      selectedFindings: ["IOP_ABOVE_NORMAL:right"],
      additionalFindings: "",
      reason: "Raised IOP",
      examSigned: true,
    };
    expect(sendProblems(ok)).toEqual({});
    expect(Object.keys(sendProblems({ ...ok, recipientEmail: null }))).toEqual(["recipientId"]);
    expect(Object.keys(sendProblems({ ...ok, selectedFindings: [] }))).toEqual(["additionalFindings"]);
    expect(sendProblems({ ...ok, selectedFindings: [], additionalFindings: "Disc haemorrhage right eye" })).toEqual({});
    expect(Object.keys(sendProblems({ ...ok, examSigned: false }))).toEqual([""]);
    // A red-flag exam may raise no measured prompt: triage's reasons are what the letter refers on.
    expect(sendProblems({ ...ok, selectedFindings: [], triageReasons: 1 })).toEqual({});
    expect(Object.keys(sendProblems({ ...ok, selectedFindings: [], triageReasons: 0 }))).toEqual([
      "additionalFindings",
    ]);
  });
});

describe("prompt values", () => {
  it("carries the unit of each measured value", async () => {
    const { promptValue } = await import("./index");
    expect(promptValue({ code: "IOP_ABOVE_NORMAL", value: 26 })).toBe("26 mmHg");
    expect(promptValue({ code: "ACUITY_REDUCED", value: 0.4 })).toBe("0.40 logMAR");
    expect(promptValue({ code: "BLIND_SPOT_ENLARGED", value: "10° × 12°" })).toBe("10° × 12°");
  });
});

describe("choosing a lower urgency than triage proposed", () => {
  it("asks for a reason only when the choice is lower", () => {
    expect(urgencyOverrideProblem("urgent", "same_day", "")).toMatch(
      /Triage proposed same day .* give your reason for choosing urgent/,
    );
    expect(urgencyOverrideProblem("urgent", "same_day", "  ok ")).toMatch(/give your reason/); // too short to be a reason
    expect(urgencyOverrideProblem("urgent", "same_day", "Seen in eye casualty yesterday; review booked")).toBeNull();
    expect(urgencyOverrideProblem("same_day", "urgent", "")).toBeNull();
    expect(urgencyOverrideProblem("routine", null, "")).toBeNull();
    expect(urgencyOverrideProblem("soon", "soon", "")).toBeNull();
  });
});
