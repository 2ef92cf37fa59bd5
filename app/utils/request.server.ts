/** The client's address as seen by the app (first hop of X-Forwarded-For behind a proxy). */
export function clientIp(request: Request): string | null {
  const forwarded = request.headers.get("x-forwarded-for");
  if (forwarded) return forwarded.split(",")[0]!.trim() || null;
  return null;
}
