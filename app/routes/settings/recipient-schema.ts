/** What the referral-recipients settings page accepts: the recipient, the reply time frames, hide/use again. */
import { z } from "zod";
import { decimalField } from "~/utils/number-field";

export const DELIVERY = {
  email: "E-mail (sent from Dioptra)",
  post: "Post (print the PDF)",
  fax: "Fax (print the PDF)",
} as const;

export const optionalText = (max: number) => z.string().trim().max(max, `At most ${max} characters.`).default("");

export const recipientSchema = z
  .object({
    intent: z.literal("save"),
    id: z.uuid().optional(),
    name: z
      .string({ error: "Give the ophthalmologist's or clinic's name." })
      .trim()
      .min(2, "Give the ophthalmologist's or clinic's name.")
      .max(120),
    clinic: optionalText(160),
    specialty: optionalText(120),
    email: z.union([z.literal(""), z.email({ error: "Enter a valid e-mail address." })]).default(""),
    phone: optionalText(40),
    addressLine1: optionalText(200),
    addressLine2: optionalText(200),
    city: optionalText(100),
    postcode: optionalText(20),
    preferredDelivery: z.enum(["email", "post", "fax"], { error: "Choose how they prefer to receive letters." }),
    notes: optionalText(1000),
  })
  .refine((v) => v.preferredDelivery !== "email" || v.email !== "", {
    path: ["email"],
    message: "An e-mail address is needed when they receive letters by e-mail.",
  });

export const days = (label: string) =>
  decimalField(
    `${label}: give a number of days.`,
    z.number().int("Whole days only.").min(0, "At least 0 days (same day).").max(730, "At most 730 days."),
  );

export const timeFrameSchema = z.object({
  intent: z.literal("timeframes"),
  referralDaysSameDay: days("Same day"),
  referralDaysUrgent: days("Urgent"),
  referralDaysSoon: days("Soon"),
  referralDaysRoutine: days("Routine"),
});

export const activeSchema = z.object({ intent: z.enum(["deactivate", "reactivate"]), id: z.uuid() });
export const schema = z.union([recipientSchema, timeFrameSchema, activeSchema]);
