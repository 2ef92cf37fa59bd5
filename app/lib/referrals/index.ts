/**
 * Referral rules: urgency time frames, the status a referral shows, when it is overdue and may
 * be chased. Plain TypeScript, no framework imports; shared by the server and the pages.
 */

import { dateTimeFormat } from "~/lib/format/intl";
import { isBelowProposal } from "./triage";

export {
  CUP_DISC_ASYMMETRY,
  CUP_DISC_REFER,
  IOP_EMERGENCY_MMHG,
  IOP_REFER_MMHG,
  IOP_URGENT_ABOVE_MMHG,
  TRIAGE_ORDER,
  TriageInputError,
  VA_LOSS_LOGMAR,
  isBelowProposal,
  triage,
  type Eye,
  type EyeFindings,
  type TriageInput,
  type TriageReason,
  type TriageResult,
  type TriageUrgency,
} from "./triage";

export const URGENCIES = ["routine", "soon", "urgent", "same_day"] as const;
export type Urgency = (typeof URGENCIES)[number];

export const URGENCY_LABEL: Record<Urgency, string> = {
  routine: "Routine",
  soon: "Soon",
  urgent: "Urgent",
  same_day: "Same day",
};

/** The practice's time frames, in days, per urgency (practice_settings.referralDays*). */
export type TimeFrames = Record<Urgency, number>;

/**
 * Defaults for the settings. // common practice: emergency referrals are seen the same day,
 * urgent ones within about a week, "soon" within a month, routine within about three months;
 * local referral pathways govern and the practice sets its own.
 */
export const DEFAULT_TIME_FRAMES: TimeFrames = { same_day: 1, urgent: 7, soon: 28, routine: 91 };

export function timeFramesOf(s: {
  referralDaysSameDay: number;
  referralDaysUrgent: number;
  referralDaysSoon: number;
  referralDaysRoutine: number;
}): TimeFrames {
  return {
    same_day: s.referralDaysSameDay,
    urgent: s.referralDaysUrgent,
    soon: s.referralDaysSoon,
    routine: s.referralDaysRoutine,
  };
}

export function describeTimeFrame(urgency: Urgency, days: number): string {
  if (urgency === "same_day") return days <= 1 ? "to be seen the same day" : `to be seen within ${days} days`;
  if (days % 7 === 0 && days >= 14) return `to be seen within ${days / 7} weeks`;
  return `to be seen within ${days} day${days === 1 ? "" : "s"}`;
}

export type StoredStatus = "draft" | "queued" | "sent" | "acknowledged" | "replied" | "withdrawn";

/** What the tracking table shows. */
export type DisplayStatus = "draft" | "queued" | "sent" | "acknowledged" | "seen" | "replied" | "overdue" | "withdrawn";

export const STATUS_LABEL: Record<DisplayStatus, string> = {
  draft: "Draft",
  queued: "Waiting to send",
  sent: "Sent",
  acknowledged: "Acknowledged",
  seen: "Seen",
  replied: "Reply received",
  overdue: "Overdue",
  withdrawn: "Withdrawn",
};

/** Tone of the status badge; the word and icon carry the meaning, the colour repeats it. */
export const STATUS_TONE: Record<DisplayStatus, "info" | "success" | "warning" | "error"> = {
  draft: "info",
  queued: "warning",
  sent: "info",
  acknowledged: "success",
  seen: "success",
  replied: "success",
  overdue: "error",
  withdrawn: "info",
};

export type ReferralState = {
  status: StoredStatus;
  sentAt: Date | null;
  /** The day the recipient booked the patient for (YYYY-MM-DD, the practice's calendar). */
  appointmentOn: string | null;
  timeFrameDays: number | null;
};

const DAY_MS = 86_400_000;

/** When the patient should have been seen by: the send time plus the urgency's time frame. */
export function dueBy(r: Pick<ReferralState, "sentAt" | "timeFrameDays">): Date | null {
  if (!r.sentAt || r.timeFrameDays === null) return null;
  return new Date(r.sentAt.getTime() + r.timeFrameDays * DAY_MS);
}

/** Today's date (YYYY-MM-DD) in a time zone. */
export function localDate(at: Date, timeZone: string): string {
  const parts = dateTimeFormat("en-CA", {
    timeZone,
    year: "numeric",
    month: "2-digit",
    day: "2-digit",
  }).format(at);
  return parts;
}

/**
 * The status shown: a reply wins; an appointment date that has arrived counts as seen; a sent
 * or acknowledged referral past its due date without being seen is overdue.
 */
export function displayStatus(r: ReferralState, now: Date, timeZone = "UTC"): DisplayStatus {
  if (r.status === "draft" || r.status === "queued" || r.status === "withdrawn" || r.status === "replied")
    return r.status;
  if (r.appointmentOn && r.appointmentOn <= localDate(now, timeZone)) return "seen";
  const due = dueBy(r);
  if (due && now.getTime() > due.getTime()) return "overdue";
  return r.status;
}

/** Minimum gap between two chasers of one referral. */
export const CHASE_GAP_DAYS = 3;

/** Whether a reminder to the recipient may be sent now (overdue, and not chased in the last few days). */
export function canChase(r: ReferralState & { lastChasedAt: Date | null }, now: Date, timeZone = "UTC"): boolean {
  if (displayStatus(r, now, timeZone) !== "overdue") return false;
  return !r.lastChasedAt || now.getTime() - r.lastChasedAt.getTime() >= CHASE_GAP_DAYS * DAY_MS;
}

/** Key of one exam prompt inside a letter: its code and eye. */
export const findingKey = (p: { code: string; eye: string }) => `${p.code}:${p.eye}`;

/** What is missing before a letter may be sent, as field errors. */
export function sendProblems(input: {
  recipientEmail: string | null | undefined;
  selectedFindings: string[];
  additionalFindings: string;
  reason: string;
  examSigned: boolean;
  triageReasons?: number;
}): Record<string, string[]> {
  const errors: Record<string, string[]> = {};
  if (!input.examSigned) errors[""] = ["The exam is not signed. Sign the exam before sending a referral from it."];
  if (!input.recipientEmail)
    errors.recipientId = ["Choose a recipient with an e-mail address (add one in Settings → Referral recipients)."];
  // Triage's reasons (a retinal break with flashes, say) are findings the letter states in words.
  if (input.selectedFindings.length === 0 && !input.additionalFindings.trim() && !(input.triageReasons ?? 0))
    errors.additionalFindings = [
      "Keep at least one finding from the exam, or describe the findings that lead you to refer.",
    ];
  if (!input.reason.trim()) errors.reason = ["Give the reason for the referral."];
  return errors;
}

/** A prompt's measured value with its unit, as the letter and the pages show it. */
export function promptValue(p: { code: string; value: number | string }): string {
  if (typeof p.value !== "number") return p.value;
  if (p.code === "IOP_ABOVE_NORMAL" || p.code === "IOP_ASYMMETRY" || p.code === "IOP_REPEAT") return `${p.value} mmHg`;
  if (p.code === "ACUITY_REDUCED") return `${p.value.toFixed(2)} logMAR`;
  if (p.code === "ACUITY_DROP") return `${p.value.toFixed(2)} logMAR lost`;
  return String(p.value);
}

/**
 * A chosen urgency below the one triage proposed needs the optometrist's reason, kept with the
 * letter. Returns the field error, or null when the choice needs no reason or has one.
 */
export function urgencyOverrideProblem(
  chosen: Urgency,
  proposed: Urgency | null,
  reason: string | null | undefined,
): string | null {
  if (!isBelowProposal(chosen, proposed)) return null;
  if ((reason ?? "").trim().length >= 5) return null;
  return `Triage proposed ${URGENCY_LABEL[proposed!].toLowerCase()} from the exam findings; give your reason for choosing ${URGENCY_LABEL[chosen].toLowerCase()} instead.`;
}
