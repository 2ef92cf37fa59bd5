/**
 * A redirect target typed by a user or carried in a link is accepted only as a path on this
 * site: it starts with a single "/", holds no backslash, no control characters (tab, CR, LF —
 * which browsers strip, turning "/\t/evil.example" into "//evil.example") and no whitespace, and
 * resolves to this origin. Anything else gives `fallback`.
 */
export function safeRedirectPath(to: unknown, fallback: string): string {
  if (typeof to !== "string" || to.length === 0 || to.length > 2000) return fallback;
  if (!to.startsWith("/") || to.startsWith("//")) return fallback;
  // Control characters, spaces and backslashes have no place in our own paths.
  // eslint-disable-next-line no-control-regex -- removing control characters is the point
  if (/[\u0000-\u0020\u007f-\u009f\\]/.test(to)) return fallback;
  try {
    const base = "http://same-origin.invalid";
    const resolved = new URL(to, base);
    if (resolved.origin !== base) return fallback;
    return `${resolved.pathname}${resolved.search}${resolved.hash}`;
  } catch {
    return fallback;
  }
}
