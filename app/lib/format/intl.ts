/**
 * Shared `Intl` formatters. Building an `Intl.DateTimeFormat` costs far more than formatting with
 * one (it loads locale and time-zone data), and a page of a hundred rows formats hundreds of
 * dates: each distinct locale and options pair is built once per process and then reused.
 * Formatters are immutable, so sharing them is safe; the keys are bounded by the code's own
 * option literals and the practice's few time zones.
 */
const formats = new Map<string, Intl.DateTimeFormat | Intl.NumberFormat>();

function cached<F extends Intl.DateTimeFormat | Intl.NumberFormat>(kind: string, make: () => F, key: string): F {
  let format = formats.get(`${kind}|${key}`) as F | undefined;
  if (!format) {
    format = make();
    formats.set(`${kind}|${key}`, format);
  }
  return format;
}

export function dateTimeFormat(locale: string, options: Intl.DateTimeFormatOptions = {}): Intl.DateTimeFormat {
  return cached("date", () => new Intl.DateTimeFormat(locale, options), `${locale}|${JSON.stringify(options)}`);
}

export function numberFormat(locale: string, options: Intl.NumberFormatOptions = {}): Intl.NumberFormat {
  return cached("number", () => new Intl.NumberFormat(locale, options), `${locale}|${JSON.stringify(options)}`);
}
