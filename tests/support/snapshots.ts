import type { ReferralSnapshot } from "~/db/schema";

/** The smallest referral snapshot the referral page and letter read (a fixture's letter with no findings). */
export const EMPTY_REFERRAL_SNAPSHOT = JSON.stringify({
  examinedAt: "2026-01-05T10:00:00.000Z",
  signedAt: "2026-01-05T10:40:00.000Z",
  examiner: "Dr Fixture",
  history: null,
  acuity: [],
  refraction: [],
  iop: [],
  colour: [],
  fields: [],
  diagnoses: [],
  prompts: [],
} satisfies ReferralSnapshot);
