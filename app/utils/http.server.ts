/**
 * What every request and response goes through (called from the root middleware):
 *  - host names: only APP_URL's host (and loopback outside production) is served;
 *  - bodies: a body the route cannot read (wrong content type, a broken form or JSON, NUL
 *    characters, oversized fields) is refused with a 4xx that says why, before any action runs;
 *  - the JSON API: every error as RFC 9457 problem details, 405 with Allow, unknown paths 404;
 *  - security headers on every response; no-store unless a route chose its own caching.
 */
import { env } from "./env.server";

/** RFC 9457 problem details. `detail` is for people; extension members carry field errors. */
export function problem(
  status: number,
  detail: string,
  extra: Record<string, unknown> = {},
  headers: HeadersInit = {},
) {
  const h = new Headers(headers);
  h.set("content-type", "application/problem+json; charset=utf-8");
  h.set("cache-control", "no-store");
  return new Response(
    JSON.stringify({
      type: "about:blank",
      title: STATUS_TITLES[status] ?? (status >= 500 ? "Server error" : "Request refused"),
      status,
      detail,
      ...extra,
    }),
    {
      status,
      headers: h,
    },
  );
}

const STATUS_TITLES: Record<number, string> = {
  400: "Bad Request",
  401: "Unauthorized",
  403: "Forbidden",
  404: "Not Found",
  405: "Method Not Allowed",
  409: "Conflict",
  410: "Gone",
  413: "Content Too Large",
  415: "Unsupported Media Type",
  421: "Misdirected Request",
  422: "Unprocessable Content",
  429: "Too Many Requests",
  500: "Internal Server Error",
  503: "Service Unavailable",
};

const LOOPBACK = new Set(["127.0.0.1", "localhost", "[::1]"]);

/**
 * The host names this app answers to: APP_URL's host; loopback names (any port) too in
 * development and tests, and in the demo when APP_URL is itself a loopback address.
 */
export function hostAllowed(host: string): boolean {
  const configured = new URL(env.APP_URL);
  const h = host.toLowerCase();
  if (h === configured.host.toLowerCase()) return true;
  const name = h.replace(/:\d+$/, "");
  if (!LOOPBACK.has(name)) return false;
  return env.NODE_ENV !== "production" || (env.DIOPTRA_DEMO && LOOPBACK.has(configured.hostname.toLowerCase()));
}

/** The JSON API's routes and the methods each answers (HEAD goes with GET). */
const API_ROUTES: { pattern: RegExp; methods: string[] }[] = [
  { pattern: /^\/api\/patients$/, methods: ["GET", "HEAD"] },
  { pattern: /^\/api\/uploads$/, methods: ["POST"] },
  { pattern: /^\/api\/appointments$/, methods: ["GET", "HEAD", "POST"] },
  { pattern: /^\/api\/appointments\/[^/]+$/, methods: ["GET", "HEAD", "PATCH", "POST"] },
  { pattern: /^\/api\/schedule-patients$/, methods: ["POST"] },
  { pattern: /^\/api\/portal-invite$/, methods: ["POST"] },
  { pattern: /^\/api\/webhooks\/stripe$/, methods: ["POST"] },
  { pattern: /^\/healthz$/, methods: ["GET", "HEAD"] },
];

export const isApiPath = (pathname: string) =>
  pathname === "/api" || pathname.startsWith("/api/") || pathname === "/healthz";

/** Path without React Router's `.data` suffix (client-side navigations). */
export const routePath = (url: URL) => url.pathname.replace(/\.data$/, "").replace(/\/$/, "") || "/";

/** 404 for an unknown API path, 405 (with Allow) for a method the API route does not take. */
export function apiRouteRefusal(request: Request): Response | null {
  const path = routePath(new URL(request.url));
  if (!isApiPath(path)) return null;
  const route = API_ROUTES.find((r) => r.pattern.test(path));
  if (!route) return problem(404, `There is no API at ${path}.`);
  const method = request.method === "HEAD" ? "GET" : request.method;
  if (request.method !== "OPTIONS" && !route.methods.includes(method)) {
    return problem(
      405,
      `${path} does not take ${request.method}; it takes ${route.methods.join(", ")}.`,
      {},
      { allow: route.methods.join(", ") },
    );
  }
  if (request.method === "OPTIONS")
    return new Response(null, { status: 204, headers: { allow: [...route.methods, "OPTIONS"].join(", ") } });
  return null;
}

const MAX_FIELD_CHARS = 100_000;
const SAFE = new Set(["GET", "HEAD", "OPTIONS"]);
const NUL = "\u0000";

function firstNul(value: unknown, path = ""): string | null {
  if (typeof value === "string") return value.includes(NUL) ? path || "(body)" : null;
  if (Array.isArray(value)) {
    for (let i = 0; i < value.length; i++) {
      const hit = firstNul(value[i], `${path}[${i}]`);
      if (hit) return hit;
    }
    return null;
  }
  if (value && typeof value === "object") {
    for (const [k, v] of Object.entries(value)) {
      if (k.includes(NUL)) return `${path}${path ? "." : ""}(a field name)`;
      const hit = firstNul(v, path ? `${path}.${k}` : k);
      if (hit) return hit;
    }
  }
  return null;
}

/**
 * Refuses what no route can read, with the reason. `answer` shapes the refusal (problem JSON
 * for the API, plain text for pages). A form body is parsed here once on a clone, so a broken
 * multipart body or a NUL character never reaches an action.
 */
export async function bodyRefusal(request: Request): Promise<{ status: number; detail: string } | null> {
  const url = new URL(request.url);
  for (const [name, value] of url.searchParams) {
    if (name.includes(NUL) || value.includes(NUL))
      return {
        status: 400,
        detail: `The query parameter ${JSON.stringify(name.replaceAll(NUL, ""))} contains a NUL character (U+0000).`,
      };
    if (value.length > 2000)
      return {
        status: 414,
        detail: `The query parameter ${JSON.stringify(name)} is too long (at most 2000 characters).`,
      };
  }
  if (SAFE.has(request.method)) return null;
  const path = routePath(url);
  // Signing out reads nothing but the session cookie and must work whatever the body.
  if (path === "/logout") return null;
  // Webhooks are verified by a signature over their raw bytes; the route reads them itself.
  if (path.startsWith("/api/webhooks/")) return null;
  const type = (request.headers.get("content-type") ?? "").split(";")[0]!.trim().toLowerCase();
  const api = isApiPath(path);
  if (type === "application/x-www-form-urlencoded" || type === "multipart/form-data") {
    let form: FormData;
    try {
      form = await request.clone().formData();
    } catch {
      return {
        status: 400,
        detail: `The ${type === "multipart/form-data" ? "multipart " : ""}form in the body could not be read.`,
      };
    }
    for (const [name, value] of form) {
      if (name.includes(NUL)) return { status: 400, detail: "A field name contains a NUL character (U+0000)." };
      if (typeof value !== "string") continue;
      if (value.includes(NUL))
        return {
          status: 400,
          detail: `The field ${JSON.stringify(name)} contains a NUL character (U+0000), which no text may hold.`,
        };
      if (value.length > MAX_FIELD_CHARS)
        return {
          status: 413,
          detail: `The field ${JSON.stringify(name)} is too long (at most ${MAX_FIELD_CHARS.toLocaleString("en-GB")} characters).`,
        };
    }
    return null;
  }
  const text = await request.clone().text();
  if (type === "application/json" || type.endsWith("+json")) {
    if (!api)
      return {
        status: 415,
        detail: "This address takes a form (application/x-www-form-urlencoded or multipart/form-data), not JSON.",
      };
    if (!text.trim()) return { status: 400, detail: "The body is empty: send a JSON object." };
    let body: unknown;
    try {
      body = JSON.parse(text);
    } catch {
      return { status: 400, detail: "The body is not valid JSON." };
    }
    if (!body || typeof body !== "object" || Array.isArray(body))
      return { status: 400, detail: "The body must be a JSON object." };
    const nul = firstNul(body);
    if (nul)
      return { status: 400, detail: `The value of ${nul} contains a NUL character (U+0000), which no text may hold.` };
    if (text.length > 1_000_000) return { status: 413, detail: "The body is too large (at most 1 MB of JSON)." };
    return null;
  }
  if (!type && text.length === 0) {
    return {
      status: 400,
      detail: api ? "The body is empty: send a JSON object." : "The request has no form: send the form's fields.",
    };
  }
  return {
    status: 415,
    detail: api
      ? `A body of type ${type || "(none given)"} cannot be read here: send JSON (application/json) or a form.`
      : `A body of type ${type || "(none given)"} cannot be read here: send a form (application/x-www-form-urlencoded or multipart/form-data).`,
  };
}

/** Turns an API error response of any shape into problem details, keeping its fields. */
export async function asProblem(response: Response): Promise<Response> {
  const type = response.headers.get("content-type") ?? "";
  if (response.status < 400 || type.includes("application/problem+json")) return response;
  let detail = response.statusText || STATUS_TITLES[response.status] || "Request refused";
  let extra: Record<string, unknown> = {};
  try {
    const text = await response.clone().text();
    const body: unknown = text ? JSON.parse(text) : null;
    if (body && typeof body === "object" && !Array.isArray(body)) {
      const b = body as Record<string, unknown>;
      const message = [b.detail, b.error, b.message].find((v) => typeof v === "string") as string | undefined;
      if (message) detail = message;
      extra = Object.fromEntries(Object.entries(b).filter(([k]) => !["type", "title", "status", "detail"].includes(k)));
    } else if (typeof body === "string") detail = body;
  } catch {
    // Not JSON: keep the status's title as the detail.
  }
  const headers = new Headers(response.headers);
  headers.delete("content-length");
  return problem(response.status, detail, extra, headers);
}

/** Headers every response gets (the CSP of HTML documents is set where they are rendered, with their nonce). */
export function withSecurityHeaders(response: Response, request: Request): Response {
  let res = response;
  try {
    res.headers.set("x-content-type-options", "nosniff");
  } catch {
    // Immutable headers (a fetched response): copy it.
    res = new Response(response.body, response);
    res.headers.set("x-content-type-options", "nosniff");
  }
  const h = res.headers;
  if (!h.has("x-frame-options")) h.set("x-frame-options", "SAMEORIGIN");
  if (!h.has("referrer-policy")) h.set("referrer-policy", "strict-origin-when-cross-origin");
  if (!h.has("cross-origin-opener-policy")) h.set("cross-origin-opener-policy", "same-origin");
  if (!h.has("permissions-policy")) h.set("permissions-policy", "camera=(), microphone=(), geolocation=(), payment=()");
  // Pages and files here are about patients or their accounts: no shared or disk cache.
  if (!h.has("cache-control")) h.set("cache-control", "no-store");
  if (new URL(request.url).protocol === "https:" || env.APP_URL.startsWith("https://")) {
    if (!h.has("strict-transport-security")) h.set("strict-transport-security", "max-age=31536000; includeSubDomains");
  }
  return res;
}

/** The Content-Security-Policy of an HTML document whose inline scripts carry `nonce`. */
export function documentCsp(nonce: string) {
  return [
    "default-src 'self'",
    `script-src 'self' 'nonce-${nonce}'`,
    // Inline style attributes (React `style`, the calendar and charts) need 'unsafe-inline'; scripts do not.
    "style-src 'self' 'unsafe-inline'",
    "img-src 'self' data: blob:",
    "font-src 'self' data:",
    "connect-src 'self'",
    "object-src 'none'",
    "base-uri 'none'",
    "frame-ancestors 'self'",
  ].join("; ");
}
