import { z } from "zod";

const today = () => new Date().toISOString().slice(0, 10);

/**
 * A patient under this age has a parent or guardian recorded, who consents for them and is
 * contacted about them (common practice: in the UK a child under 16 is seen with the consent of
 * a parent or guardian unless judged able to consent; local law decides).
 */
export const GUARDIAN_UNDER_AGE = 16;

/** Whether someone born on `dob` (YYYY-MM-DD) is under `years` on `on` (YYYY-MM-DD). */
export function isUnder(dob: string, years: number, on: string = today()): boolean {
  const [y, m, d] = dob.split("-").map(Number) as [number, number, number];
  const birthday = `${String(y + years).padStart(4, "0")}-${String(m).padStart(2, "0")}-${String(d).padStart(2, "0")}`;
  return on < birthday;
}

const phoneField = z
  .string()
  .trim()
  .max(40, "At most 40 characters.")
  .regex(/^[0-9+()\s.-]*$/, "Use digits, spaces and + ( ) - only.")
  .default("");

/** Registration and demographics form, shared by the browser and the server. */
export const patientSchema = z
  .object({
    firstName: z
      .string({ error: "Give the first name." })
      .trim()
      .min(1, "Give the first name.")
      .max(80, "At most 80 characters."),
    lastName: z
      .string({ error: "Give the last name." })
      .trim()
      .min(1, "Give the last name.")
      .max(80, "At most 80 characters."),
    dateOfBirth: z
      .string({ error: "Give the date of birth." })
      .regex(/^\d{4}-\d{2}-\d{2}$/, "Use the date picker or YYYY-MM-DD.")
      .refine(
        (v) => !Number.isNaN(Date.parse(v)) && new Date(v).toISOString().slice(0, 10) === v,
        "That is not a real date.",
      )
      .refine((v) => v <= today(), "The date of birth cannot be in the future.")
      .refine((v) => v >= "1900-01-01", "The date of birth must be after 1900."),
    sex: z.enum(["female", "male", "other", "unknown"], { error: "Choose one." }).default("unknown"),
    email: z
      .union([z.literal(""), z.email({ error: "Enter a valid e-mail address." }).max(200)])
      .default("")
      .transform((v) => v.toLowerCase()),
    phone: z
      .string()
      .trim()
      .max(40, "At most 40 characters.")
      .regex(/^[0-9+()\s.-]*$/, "Use digits, spaces and + ( ) - only.")
      .default(""),
    /** A child's parent or guardian: required under GUARDIAN_UNDER_AGE (see the refinement below). */
    guardianName: z.string().trim().max(120, "At most 120 characters.").default(""),
    guardianRelationship: z.string().trim().max(60, "At most 60 characters.").default(""),
    guardianPhone: phoneField,
    guardianEmail: z
      .union([z.literal(""), z.email({ error: "Enter a valid e-mail address for the guardian." }).max(200)])
      .default("")
      .transform((v) => v.toLowerCase()),
    addressLine1: z.string().trim().max(200).default(""),
    city: z.string().trim().max(100).default(""),
    postcode: z.string().trim().max(20).default(""),
    remindersByEmail: z.preprocess((v) => v === "on" || v === "true" || v === true, z.boolean()).default(false),
    /** The patient's general practitioner, for referral letters. */
    gpName: z.string().trim().max(120, "At most 120 characters.").default(""),
    gpPractice: z.string().trim().max(160, "At most 160 characters.").default(""),
    gpAddress: z.string().trim().max(300, "At most 300 characters.").default(""),
    gpPhone: z
      .string()
      .trim()
      .max(40, "At most 40 characters.")
      .regex(/^[0-9+()\s.-]*$/, "Use digits, spaces and + ( ) - only.")
      .default(""),
    /** Clinical: only clinical roles may change these (the server ignores them from other roles). */
    allergies: z.string().trim().max(2000, "At most 2,000 characters.").default(""),
    /** "No known allergies" was asked and recorded; an empty allergies field alone means not asked. */
    noKnownAllergies: z.preprocess((v) => v === "on" || v === "true" || v === true, z.boolean()).default(false),
    medications: z.string().trim().max(2000, "At most 2,000 characters.").default(""),
    /** Set when the user has seen the duplicate warning and registers anyway. */
    confirmDuplicate: z.string().optional(),
  })
  .superRefine((v, ctx) => {
    const child = /^\d{4}-\d{2}-\d{2}$/.test(v.dateOfBirth) && isUnder(v.dateOfBirth, GUARDIAN_UNDER_AGE);
    if (child) {
      const need = `Required for a patient under ${GUARDIAN_UNDER_AGE}`;
      if (!v.guardianName)
        ctx.addIssue({
          code: "custom",
          path: ["guardianName"],
          message: `${need}: give the parent's or guardian's name.`,
        });
      if (!v.guardianRelationship)
        ctx.addIssue({
          code: "custom",
          path: ["guardianRelationship"],
          message: `${need}: say how they are related (mother, father, legal guardian…).`,
        });
      if (!v.guardianPhone && !v.guardianEmail)
        ctx.addIssue({
          code: "custom",
          path: ["guardianPhone"],
          message: `${need}: give the guardian's phone or e-mail, so they can be reached.`,
        });
    } else if ((v.guardianPhone || v.guardianEmail || v.guardianRelationship) && !v.guardianName)
      ctx.addIssue({ code: "custom", path: ["guardianName"], message: "Give the guardian's name with their details." });
    if (v.noKnownAllergies && v.allergies)
      ctx.addIssue({
        code: "custom",
        path: ["noKnownAllergies"],
        message: 'Allergies are listed: clear the list or untick "No known allergies".',
      });
  });
export type PatientInput = z.infer<typeof patientSchema>;

/** Sort keys of the patients table, as they appear in the URL. */
export const PATIENT_SORTS = ["name", "dob", "lastExam", "created"] as const;
export type PatientSort = (typeof PATIENT_SORTS)[number];
export const PATIENT_FILTERS = ["all", "due", "never"] as const;
export type PatientFilter = (typeof PATIENT_FILTERS)[number];

export const listQuerySchema = z.object({
  q: z.string().trim().max(100).catch(""),
  sort: z.enum(PATIENT_SORTS).catch("name"),
  dir: z.enum(["asc", "desc"]).catch("asc"),
  page: z.coerce.number().int().min(1).max(100_000).catch(1),
  size: z.coerce
    .number()
    .int()
    .refine((n) => [10, 25, 50, 100].includes(n))
    .catch(25),
  filter: z.enum(PATIENT_FILTERS).catch("all"),
});
export type ListQuery = z.infer<typeof listQuerySchema>;

export const isUuid = (s: string | undefined | null): s is string =>
  !!s && /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i.test(s);
