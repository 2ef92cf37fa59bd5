/** Shared by the referral modules: ids, the reference, the error type, the practice row and dates in letters. */
import { dateTimeFormat } from "~/lib/format/intl";
import { eq } from "drizzle-orm";
import { data } from "react-router";
import { practiceSettings } from "~/db/schema";
import { db } from "~/utils/db.server";
import { DomainError, type FailureStatus, type FieldErrors } from "~/utils/failure.server";

export const UUID_RE = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;
export const isUuid = (v: string | null | undefined): v is string => !!v && UUID_RE.test(v);

/** The referral's reference for letters and e-mails, from its running number (never the patient's name in a subject line). */
export const referenceOf = (number: number) => `REF-${String(number).padStart(5, "0")}`;

/**
 * A referral rule that refuses. A message for the whole form has no field; `inFields` builds one
 * from the fields at fault, its message their messages in order.
 */
export class ReferralError extends DomainError {
  static inFields(fieldErrors: FieldErrors, status: FailureStatus = 400) {
    return new ReferralError(Object.values(fieldErrors).flat().join(" "), { status, fieldErrors });
  }

  /** The form's errors: `formErrors` for the whole letter (its message when no field is named) and the fields'. */
  get formReply(): { formErrors?: string[]; fieldErrors: FieldErrors } {
    const { "": form, ...fieldErrors } = this.fieldErrors;
    return { formErrors: form ?? (Object.keys(fieldErrors).length ? undefined : [this.message]), fieldErrors };
  }
}

// ------------------------------------------------------------------------------- settings

export async function practice() {
  const [p] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
  if (!p) throw data({ error: "Practice settings are missing; run the seed." }, { status: 500 });
  return p;
}

export function formatDate(
  at: Date | string,
  timeZone: string,
  opts: Intl.DateTimeFormatOptions = { day: "numeric", month: "long", year: "numeric" },
) {
  const d = typeof at === "string" ? new Date(`${at}T12:00:00Z`) : at;
  return dateTimeFormat("en-GB", { timeZone: typeof at === "string" ? "UTC" : timeZone, ...opts }).format(d);
}

// ------------------------------------------------------------------------------- the exam

export const EYE_WORD = { right: "Right", left: "Left", both: "Both" } as const;
