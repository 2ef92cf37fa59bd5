import { isIP } from "node:net";
import { env } from "./env.server";

/**
 * The client's address as seen by the app. Behind `TRUST_PROXY` reverse proxies it is the entry
 * of X-Forwarded-For that the outermost trusted proxy appended (entries to its left are what
 * the client sent and can be anything). Without a trusted proxy the header is ignored and the
 * address is unknown (null): the Node server behind react-router-serve does not see the socket.
 */
export function clientIp(request: Request): string | null {
  const hops = env.TRUST_PROXY;
  if (hops < 1) return null;
  const forwarded = request.headers.get("x-forwarded-for");
  if (!forwarded) return null;
  const list = forwarded.split(",").map((s) => s.trim());
  const candidate = list[list.length - hops];
  return candidate && isIP(candidate) ? candidate : null;
}

/** The key of the client's attempt budgets: its address, or one shared key when it is unknown. */
export function clientKey(request: Request): string {
  return clientIp(request) ?? "unknown";
}
