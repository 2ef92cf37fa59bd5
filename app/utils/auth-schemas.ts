import { z } from "zod";

/** The sign-in form, checked by the server (the page ships no validation code). */
export const signInSchema = z.object({
  email: z
    .string({ error: "Enter your e-mail address." })
    .trim()
    .toLowerCase()
    .pipe(z.email({ error: "Enter a valid e-mail address, like name@example.com." })),
  password: z
    .string({ error: "Enter your password." })
    .min(1, "Enter your password.")
    .max(200, "That password is too long."),
  redirectTo: z.string().optional(),
});

/** A new password (reset and invitation pages). */
export const passwordSchema = z
  .string({ error: "Choose a password." })
  .min(10, "Use at least 10 characters.")
  .max(200, "Use at most 200 characters.");
