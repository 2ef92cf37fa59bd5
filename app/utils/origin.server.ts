import { env } from "./env.server";

const SAFE_METHODS = new Set(["GET", "HEAD", "OPTIONS"]);

/**
 * Cross-site request check for state-changing requests. A browser always sends Origin on a
 * cross-origin POST; when it does, it must be this app's own origin (the request's host, or
 * APP_URL behind a proxy). Requests without Origin and without `Sec-Fetch-Site: cross-site`
 * (curl, integrations, server-to-server webhooks) pass: they carry no ambient browser cookies
 * of a victim. Returns the reason for refusal, or null.
 */
export function crossSiteRefusal(request: Request): string | null {
  if (SAFE_METHODS.has(request.method)) return null;
  const url = new URL(request.url);
  // Webhooks from payment providers are server-to-server and verified by signature instead.
  if (url.pathname.startsWith("/api/webhooks/")) return null;
  const origin = request.headers.get("origin");
  if (origin) {
    const allowed = new Set([url.origin, new URL(env.APP_URL).origin]);
    return allowed.has(origin) ? null : `Cross-site request refused: origin ${origin} is not this application.`;
  }
  if (request.headers.get("sec-fetch-site") === "cross-site") return "Cross-site request refused.";
  return null;
}
