import { data } from "react-router";
import { env } from "./env.server";

export type MailboxSummary = {
  id: string;
  receivedAt: string;
  from: string;
  to: string[];
  subject: string;
  attachments: { index: number; filename: string; contentType: string; size: number }[];
};
export type MailboxMessage = MailboxSummary & { text: string; html: string };

/** The mailbox exists only in demo mode; elsewhere its pages answer 404. */
export function requireDemoMode() {
  if (!env.DIOPTRA_DEMO) throw data({ error: "Not found." }, { status: 404 });
}

export async function mailboxFetch(path: string): Promise<Response> {
  try {
    return await fetch(new URL(path, env.MAILBOX_API_URL));
  } catch {
    throw data({ error: "The local mail stand-in is not running. Start the app with npm start." }, { status: 503 });
  }
}
