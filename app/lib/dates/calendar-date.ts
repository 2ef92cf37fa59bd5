/**
 * A calendar date typed or sent as YYYY-MM-DD (or a month as YYYY-MM) that exists in the
 * Gregorian calendar: "2026-02-30" does not, and JavaScript's Date quietly rolls it over to
 * 2 March while PostgreSQL refuses it. Years before 1000 are refused too: "0000-01-01" is no
 * date PostgreSQL stores (there is no year 0) and none the practice means.
 */
export function isCalendarDate(text: unknown): text is string {
  if (typeof text !== "string") return false;
  const m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(text);
  if (!m) return false;
  const [y, mo, d] = [Number(m[1]), Number(m[2]), Number(m[3])];
  if (y < 1000 || mo < 1 || mo > 12 || d < 1) return false;
  return d <= new Date(Date.UTC(y, mo, 0)).getUTCDate();
}

export function isCalendarMonth(text: unknown): text is string {
  if (typeof text !== "string") return false;
  const m = /^(\d{4})-(\d{2})$/.exec(text);
  return Boolean(m) && Number(m![1]) >= 1000 && Number(m![2]) >= 1 && Number(m![2]) <= 12;
}
