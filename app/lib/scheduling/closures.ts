/**
 * Closures: whole local days on which the practice (or one site) is shut, or one clinician is on
 * leave. Pure: which closure, if any, stops a booking on a day, and how to say so.
 */
import { formatDate } from "~/lib/format";

export type ClosureKind = "bank_holiday" | "practice" | "leave";

export type ClosureSpan = {
  kind: ClosureKind;
  /** null: every site. */
  siteId: string | null;
  /** Set only for leave. */
  providerId: string | null;
  /** Inclusive local dates, YYYY-MM-DD. */
  startsOn: string;
  endsOn: string;
  reason: string;
};

export const CLOSURE_KIND_LABEL: Record<ClosureKind, string> = {
  bank_holiday: "Bank holiday",
  practice: "Practice closed",
  leave: "Clinician on leave",
};

const ORDER: ClosureKind[] = ["bank_holiday", "practice", "leave"];

/** The closure that stops `providerId` being booked at `siteId` on local `date`, or undefined. Whole-practice closures win over leave. */
export function closureOn<T extends ClosureSpan>(
  date: string,
  where: { siteId: string; providerId: string },
  closures: readonly T[],
): T | undefined {
  return closures
    .filter(
      (c) =>
        c.startsOn <= date &&
        date <= c.endsOn &&
        (c.siteId === null || c.siteId === where.siteId) &&
        (c.providerId === null || c.providerId === where.providerId),
    )
    .sort((a, b) => ORDER.indexOf(a.kind) - ORDER.indexOf(b.kind))[0];
}

/** "on 25 Dec 2026" or "from 24 Dec 2026 to 2 Jan 2027". */
export function closureDates(c: Pick<ClosureSpan, "startsOn" | "endsOn">): string {
  return c.startsOn === c.endsOn
    ? `on ${formatDate(c.startsOn)}`
    : `from ${formatDate(c.startsOn)} to ${formatDate(c.endsOn)}`;
}

/** The plain-English refusal for a booking that falls on `c`. */
export function closureRefusal(c: ClosureSpan, names: { siteName?: string | null; providerName?: string | null }) {
  const dates = closureDates(c);
  switch (c.kind) {
    case "bank_holiday":
      return `The practice is closed ${dates} (${c.reason}, a bank holiday). Choose another day.`;
    case "practice":
      return `${c.siteId && names.siteName ? names.siteName : "The practice"} is closed ${dates} (${c.reason}). Choose another day.`;
    case "leave":
      return `${names.providerName ?? "The clinician"} is on leave ${dates} (${c.reason}). Choose another day or another clinician.`;
  }
}
