import { z } from "zod";

const today = () => new Date().toISOString().slice(0, 10);

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
