import { z } from "zod";

/** The sign-in form, shared by the browser (instant feedback) and the server (the check). */
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
