import { createCookieSessionStorage, redirect } from "react-router";
import { z } from "zod";
import { env } from "./env.server";

export const toastSchema = z.object({
  kind: z.enum(["success", "info", "warning", "error"]).default("success"),
  title: z.string(),
  description: z.string().optional(),
});
export type Toast = z.infer<typeof toastSchema>;

const storage = createCookieSessionStorage({
  cookie: {
    name: "dioptra_toast",
    httpOnly: true,
    sameSite: "lax",
    secure: env.APP_URL.startsWith("https://"),
    path: "/",
    secrets: env.SESSION_SECRET.split(","),
  },
});

export async function toastHeader(toast: z.input<typeof toastSchema>) {
  const session = await storage.getSession();
  session.flash("toast", toastSchema.parse(toast));
  return storage.commitSession(session);
}

export async function redirectWithToast(url: string, toast: z.input<typeof toastSchema>, init?: ResponseInit) {
  const headers = new Headers(init?.headers);
  headers.append("Set-Cookie", await toastHeader(toast));
  return redirect(url, { ...init, headers });
}

/** Reads (and clears) the flash toast of this request. */
export async function readToast(request: Request): Promise<{ toast: Toast | null; setCookie: string | null }> {
  const session = await storage.getSession(request.headers.get("Cookie"));
  const parsed = toastSchema.safeParse(session.get("toast"));
  if (!parsed.success) return { toast: null, setCookie: null };
  return { toast: parsed.data, setCookie: await storage.destroySession(session) };
}
