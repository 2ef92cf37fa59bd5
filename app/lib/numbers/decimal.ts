/**
 * Strict decimal numbers for typed clinical and form values. JavaScript's Number() also reads
 * hexadecimal ("0x10" → 16), binary and octal ("0b1", "0o7"), exponents ("1e1" → 10),
 * "Infinity" and whitespace-only text (→ 0); none of those is what a person means when typing a
 * measurement. Accepted: an optional sign (+, - or the minus sign U+2212), digits, and an
 * optional decimal point with digits ("3", "-0.75", "+2.", ".5").
 */
const DECIMAL = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)$/;

export function isDecimalText(text: string): boolean {
  return DECIMAL.test(text.trim().replace(/\u2212/g, "-"));
}

/** The number the text writes in plain decimal notation, or null for anything else (or empty). */
export function parseDecimal(text: string | null | undefined): number | null {
  if (typeof text !== "string") return null;
  const t = text.trim().replace(/\u2212/g, "-");
  if (!DECIMAL.test(t)) return null;
  const n = Number(t);
  return Number.isFinite(n) ? n : null;
}
