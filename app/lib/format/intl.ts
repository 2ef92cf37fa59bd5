/**
 * Shared `Intl` formatters. Building an `Intl.DateTimeFormat` costs far more than formatting with
 * one (it loads locale and time-zone data), and a page of a hundred rows formats hundreds of
 * dates: each distinct locale and options pair is built once per process and then reused.
 * Formatters are immutable, so sharing them is safe; the keys are bounded by the code's own
 * option literals and the practice's few time zones.
 */
const dateFormats = new Map<string, Intl.DateTimeFormat>();
const numberFormats = new Map<string, Intl.NumberFormat>();

export function dateTimeFormat(locale: string, options: Intl.DateTimeFormatOptions = {}): Intl.DateTimeFormat {
  const key = `${locale}|${JSON.stringify(options)}`;
  let format = dateFormats.get(key);
  if (!format) {
    format = new Intl.DateTimeFormat(locale, options);
    dateFormats.set(key, format);
  }
  return format;
}

export function numberFormat(locale: string, options: Intl.NumberFormatOptions = {}): Intl.NumberFormat {
  const key = `${locale}|${JSON.stringify(options)}`;
  let format = numberFormats.get(key);
  if (!format) {
    format = new Intl.NumberFormat(locale, options);
    numberFormats.set(key, format);
  }
  return format;
}
