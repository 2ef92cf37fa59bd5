/**
 * Recall due dates: when a patient is due for their next routine exam.
 * The interval comes from the optometrist's plan on the exam when it sets one, then from the
 * visit type, otherwise from the practice's
 * defaults by age (common practice: 12 months for children, 24 for adults; children are under 16).
 */
export type RecallSettings = { recallMonthsChild: number; recallMonthsAdult: number; childUnderYears: number };
export type RecallRule = "optometrist's plan" | "visit type" | "child default" | "adult default";

const pad = (n: number) => String(n).padStart(2, "0");

function parts(date: string): [number, number, number] {
  const m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(date);
  if (!m) throw new RangeError(`Not a calendar day: ${date}`);
  return [Number(m[1]), Number(m[2]), Number(m[3])];
}

/** Whole years of age on `on` (a birthday on 29 February counts from 1 March in other years). */
export function ageOn(dateOfBirth: string, on: string): number {
  const [by, bm, bd] = parts(dateOfBirth);
  const [y, m, d] = parts(on);
  let age = y - by;
  if (m < bm || (m === bm && d < bd)) age -= 1;
  return age;
}

/** `date` plus whole months; a day past the end of the target month falls on its last day (31 Jan + 1 month = 28/29 Feb). */
export function addMonths(date: string, months: number): string {
  const [y, m, d] = parts(date);
  const index = y * 12 + (m - 1) + months;
  const ty = Math.floor(index / 12);
  const tm = (index % 12) + 1;
  const last = new Date(Date.UTC(ty, tm, 0)).getUTCDate();
  return `${ty}-${pad(tm)}-${pad(Math.min(d, last))}`;
}

/** What the interval is chosen from: the exam's own plan first, then the visit type, then age. */
export type RecallInput = {
  planRecallMonths?: number | null;
  typeRecallMonths: number | null;
  dateOfBirth: string;
  examDate: string;
};

/** The recall interval after an exam on `examDate`, and which rule gave it. */
export function recallInterval(input: RecallInput, settings: RecallSettings): { months: number; rule: RecallRule } {
  if (input.planRecallMonths) return { months: input.planRecallMonths, rule: "optometrist's plan" };
  if (input.typeRecallMonths) return { months: input.typeRecallMonths, rule: "visit type" };
  const child = ageOn(input.dateOfBirth, input.examDate) < settings.childUnderYears;
  return child
    ? { months: settings.recallMonthsChild, rule: "child default" }
    : { months: settings.recallMonthsAdult, rule: "adult default" };
}

/** The day the patient is due again after a routine exam on `examDate`. */
export function recallDueDate(
  input: RecallInput,
  settings: RecallSettings,
): { dueDate: string; months: number; rule: RecallRule } {
  const { months, rule } = recallInterval(input, settings);
  return { dueDate: addMonths(input.examDate, months), months, rule };
}
