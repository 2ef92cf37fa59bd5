import { z } from "zod";
import { parseDecimal } from "~/lib/numbers/decimal";

/**
 * A form field that holds a number typed in plain decimal notation, then checked by `number`
 * (e.g. `z.number().int(...).min(...)`). Unlike `z.coerce.number()`, which reads text with
 * Number(), it refuses hexadecimal ("0x10"), exponents ("1e1"), "Infinity" and blank text with
 * `message` and what was typed, instead of turning them into 16, 10, Infinity or 0.
 */
export function decimalField(message: string, number: z.ZodNumber = z.number()) {
  return z
    .string({ error: message })
    .transform((text, ctx) => {
      const n = parseDecimal(text);
      if (n === null) {
        const shown = text.trim() ? `"${text.trim().slice(0, 20)}" is not a plain decimal number. ` : "";
        ctx.addIssue({ code: "custom", message: `${shown}${message}` });
        return z.NEVER;
      }
      return n;
    })
    .pipe(number);
}
