/**
 * Money for invoices: integer minor units only (pence, cents), never floating point.
 * Pure functions shared by server and browser; the server is the one that computes totals.
 */

export type TaxCategory = "standard" | "exempt";
export type Discount = { kind: "none" } | { kind: "percent"; basisPoints: number } | { kind: "amount"; minor: number };

export type LineInput = { quantity: number; unitPriceMinor: number; taxCategory: TaxCategory };
export type LineTotals = { grossMinor: number; discountMinor: number; netMinor: number; taxMinor: number };
export type InvoiceTotals = {
  lines: LineTotals[];
  subtotalMinor: number;
  discountMinor: number;
  taxMinor: number;
  totalMinor: number;
};

/** Minor-unit exponent of an ISO 4217 currency (JPY has none, BHD three). // from memory: ISO 4217 list */
export function minorUnitDigits(currency: string): number {
  const zero = ["JPY", "KRW", "ISK", "CLP", "VND", "XAF", "XOF", "UGX", "PYG"];
  const three = ["BHD", "KWD", "OMR", "JOD", "TND", "IQD", "LYD"];
  const c = currency.toUpperCase();
  return zero.includes(c) ? 0 : three.includes(c) ? 3 : 2;
}

function assertMinor(n: number, what: string) {
  if (!Number.isSafeInteger(n)) throw new RangeError(`${what} must be a whole number of minor units`);
}

/**
 * a × b / c rounded half away from zero, in integers (BigInt, so no float error).
 * // common practice: tax and percentage discounts are rounded to the nearest minor unit, halves up.
 */
export function mulDivRound(a: number, b: number, c: number): number {
  assertMinor(a, "amount");
  const n = BigInt(a) * BigInt(b);
  const d = BigInt(c);
  const neg = n < 0n !== d < 0n;
  const an = n < 0n ? -n : n;
  const ad = d < 0n ? -d : d;
  const q = (an * 2n + ad) / (ad * 2n);
  return Number(neg ? -q : q);
}

/**
 * Splits `total` over `weights` in proportion, in whole minor units that add up exactly
 * (largest remainder; ties go to the earlier line).
 */
export function allocate(total: number, weights: number[]): number[] {
  assertMinor(total, "total");
  const sum = weights.reduce((a, b) => a + b, 0);
  if (weights.length === 0) return [];
  if (sum === 0) return weights.map((_, i) => (i === 0 ? total : 0));
  const shares = weights.map((w) => {
    const exact = BigInt(total) * BigInt(w);
    return { floor: Number(exact / BigInt(sum)), rem: Number(exact % BigInt(sum)) };
  });
  let left = total - shares.reduce((a, s) => a + s.floor, 0);
  const order = shares.map((s, i) => ({ i, rem: s.rem })).sort((x, y) => y.rem - x.rem || x.i - y.i);
  const out = shares.map((s) => s.floor);
  for (const { i } of order) {
    if (left <= 0) break;
    out[i]! += 1;
    left -= 1;
  }
  return out;
}

/**
 * Totals of an invoice. Prices are before tax. The invoice discount is taken off first and
 * shared over the lines in proportion to their value (so it lowers the taxable amount of each,
 * // common practice: a discount given at the time of sale reduces the value tax is charged on);
 * tax is then worked out per line at the line's rate and rounded half up per line.
 */
export function computeTotals(lines: LineInput[], discount: Discount, taxRateBp: number): InvoiceTotals {
  if (!Number.isInteger(taxRateBp) || taxRateBp < 0 || taxRateBp > 10000)
    throw new RangeError("tax rate must be 0–10000 basis points");
  const gross = lines.map((l) => {
    if (!Number.isInteger(l.quantity) || l.quantity < 1)
      throw new RangeError("quantity must be a whole number of at least 1");
    assertMinor(l.unitPriceMinor, "unit price");
    if (l.unitPriceMinor < 0) throw new RangeError("unit price must not be negative");
    return l.quantity * l.unitPriceMinor;
  });
  const subtotalMinor = gross.reduce((a, b) => a + b, 0);
  let discountMinor = 0;
  if (discount.kind === "percent") {
    if (discount.basisPoints < 0 || discount.basisPoints > 10000) throw new RangeError("discount must be 0–100 %");
    discountMinor = mulDivRound(subtotalMinor, discount.basisPoints, 10000);
  } else if (discount.kind === "amount") {
    assertMinor(discount.minor, "discount");
    if (discount.minor < 0) throw new RangeError("discount must not be negative");
    discountMinor = Math.min(discount.minor, subtotalMinor);
  }
  const shares = allocate(discountMinor, gross);
  const out: LineTotals[] = lines.map((l, i) => {
    const netMinor = gross[i]! - shares[i]!;
    const rate = l.taxCategory === "standard" ? taxRateBp : 0;
    return { grossMinor: gross[i]!, discountMinor: shares[i]!, netMinor, taxMinor: mulDivRound(netMinor, rate, 10000) };
  });
  const taxMinor = out.reduce((a, l) => a + l.taxMinor, 0);
  return { lines: out, subtotalMinor, discountMinor, taxMinor, totalMinor: subtotalMinor - discountMinor + taxMinor };
}

/** Plain decimal for CSV and form fields: 1250 → "12.50". */
export function minorToDecimal(minor: number, currency: string): string {
  const digits = minorUnitDigits(currency);
  const neg = minor < 0;
  const abs = Math.abs(minor)
    .toString()
    .padStart(digits + 1, "0");
  const whole = digits ? abs.slice(0, -digits) : abs;
  const frac = digits ? `.${abs.slice(-digits)}` : "";
  return `${neg ? "-" : ""}${whole}${frac}`;
}

/**
 * Parses what a person types ("12", "12.5", "£12.50", "1,250.00") to minor units, exactly
 * (string arithmetic, no floats). Null when it is not an amount in this currency.
 */
export function parseMoney(input: string, currency: string): number | null {
  const digits = minorUnitDigits(currency);
  const s = input
    .trim()
    .replace(/^[£$€]/, "")
    .replace(/,/g, "")
    .trim();
  const m = /^(\d{1,9})(?:\.(\d*))?$/.exec(s);
  if (!m) return null;
  const frac = m[2] ?? "";
  if (frac.length > digits) return null;
  return Number(m[1]) * 10 ** digits + Number((frac + "0".repeat(digits)).slice(0, digits) || "0");
}

/** "20 %" from basis points. */
export function formatRate(bp: number): string {
  return `${(bp / 100).toLocaleString("en-GB", { maximumFractionDigits: 2 })} %`;
}
