/**
 * Outgoing e-mail. Every message goes out from the practice (its name as the sender's name, its
 * own address as Reply-To, so a patient's reply reaches the front desk rather than an unread
 * robot box), with an HTML part beside the plain-text part. Mail the system sends by itself is
 * marked `Auto-Submitted: auto-generated` (RFC 3834, section 5), so auto-responders do not answer
 * it. Reminders and recalls carry `List-Unsubscribe` with one-click unsubscription
 * (RFC 8058: `List-Unsubscribe-Post: List-Unsubscribe=One-Click` beside an HTTPS URI; the POST is
 * handled by routes/public/unsubscribe.tsx with a signed token naming the patient and the list).
 * RFC 8058 also asks for a DKIM signature covering both headers: that is the relay's job.
 */
import { createHmac, timingSafeEqual } from "node:crypto";
import { eq } from "drizzle-orm";
import nodemailer from "nodemailer";
import { practiceSettings } from "~/db/schema";
import { db } from "./db.server";
import { env } from "./env.server";

export type MailAttachment = { filename: string; content: Buffer | string; contentType?: string };
export type UnsubscribeList = "reminders" | "recalls";
export type Mail = {
  to: string;
  subject: string;
  text: string;
  html?: string;
  attachments?: MailAttachment[];
  from?: string;
  replyTo?: string;
  headers?: Record<string, string>;
  /**
   * Sent by the system rather than written by a person for this one reader (reminders,
   * receipts, sign-in links…): marked Auto-Submitted. Default true.
   */
  automatic?: boolean;
  /** Reminders and recalls: the patient's one-click way to stop this kind of e-mail. */
  unsubscribe?: { patientId: string; list: UnsubscribeList };
};

// In production this is any SMTP relay; locally it is the stand-in on loopback, which
// offers neither TLS nor AUTH, so STARTTLS is not attempted when no credentials are set.
const transport = nodemailer.createTransport({
  host: env.SMTP_HOST,
  port: env.SMTP_PORT,
  secure: false,
  ignoreTLS: !env.SMTP_USER,
  auth: env.SMTP_USER ? { user: env.SMTP_USER, pass: env.SMTP_PASSWORD ?? "" } : undefined,
  connectionTimeout: 5_000,
  greetingTimeout: 5_000,
});

/** The address part of MAIL_FROM ("Name <a@b>" or "a@b"). */
function fromAddress() {
  const m = /<([^>]+)>/.exec(env.MAIL_FROM);
  return (m ? m[1]! : env.MAIL_FROM).trim();
}

/** A display name as an RFC 5322 quoted string. */
function quoted(name: string) {
  return `"${name.replace(/[\r\n]/g, " ").replace(/(["\\])/g, "\\$1")}"`;
}

const escapeHtml = (s: string) =>
  s.replace(/[&<>"']/g, (c) => ({ "&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;", "'": "&#39;" })[c]!);

/** The HTML part: the same words as the text part, paragraphs kept, links clickable. */
export function htmlFromText(text: string, opts: { practiceName: string; unsubscribeUrl?: string; lang?: string }) {
  const linkify = (line: string) =>
    escapeHtml(line).replace(
      /https?:\/\/[^\s<>"']+[^\s<>"'.,;:!?)]/g,
      (url) => `<a href="${url}" style="color:#0d5c61">${url}</a>`,
    );
  const paragraphs = text
    .replace(/\r\n?/g, "\n")
    .trim()
    .split(/\n{2,}/)
    .map((p) => {
      const lines = p.split("\n");
      // An indented block (an appointment's details) keeps its lines without the indent.
      return `<p style="margin:0 0 1em">${lines.map((l) => linkify(l.replace(/^ {2,}/, ""))).join("<br>\n")}</p>`;
    })
    .join("\n");
  const footer = opts.unsubscribeUrl
    ? `<p style="margin:2em 0 0;font-size:13px;color:#4a5a66">You receive these e-mails as a patient of ${escapeHtml(opts.practiceName)}. <a href="${escapeHtml(opts.unsubscribeUrl)}" style="color:#0d5c61">Stop these e-mails</a>.</p>`
    : "";
  return `<!doctype html>
<html lang="${opts.lang ?? "en-GB"}">
<head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1"><title>${escapeHtml(opts.practiceName)}</title></head>
<body style="margin:0;padding:24px;background:#ffffff;color:#17212b;font-family:Helvetica,Arial,sans-serif;font-size:16px;line-height:1.5">
<div style="max-width:36em">
${paragraphs}
${footer}
</div>
</body>
</html>`;
}

// ---------------------------------------------------------------- unsubscribe tokens

function unsubscribeKey(secret: string) {
  return createHmac("sha256", secret).update("dioptra unsubscribe v1").digest();
}
function unsubscribeSignature(secret: string, patientId: string, list: UnsubscribeList) {
  return createHmac("sha256", unsubscribeKey(secret)).update(`${patientId}.${list}`).digest("base64url");
}

/**
 * `<patientId>.<list>.<HMAC>`: stops one kind of e-mail for one patient. It does not expire:
 * an unsubscribe link must keep working for as long as the e-mails that carry it are kept.
 */
export function signUnsubscribe(patientId: string, list: UnsubscribeList) {
  const secret = env.SESSION_SECRET.split(",")[0]!;
  return `${patientId}.${list}.${unsubscribeSignature(secret, patientId, list)}`;
}

/** Checks an unsubscribe token (constant time, every current secret); null when it is not one of ours. */
export function verifyUnsubscribe(token: string): { patientId: string; list: UnsubscribeList } | null {
  const m = /^([0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12})\.(reminders|recalls)\.([\w-]{43})$/.exec(
    token,
  );
  if (!m) return null;
  const [, patientId, list, sig] = m as unknown as [string, string, UnsubscribeList, string];
  const given = Buffer.from(sig, "utf8");
  const ok = env.SESSION_SECRET.split(",").some((secret) => {
    const want = Buffer.from(unsubscribeSignature(secret, patientId, list), "utf8");
    return want.length === given.length && timingSafeEqual(want, given);
  });
  return ok ? { patientId, list } : null;
}

export const unsubscribeUrl = (patientId: string, list: UnsubscribeList) =>
  absoluteUrl(`/unsubscribe/${signUnsubscribe(patientId, list)}`);

// ---------------------------------------------------------------- sending

/** An address nobody reads ("no-reply@…", "donotreply@…"): never offered for replies. */
export function isNoReplyAddress(address: string) {
  return /^(no-?reply|do-?not-?reply|noreply|mailer-daemon)([+.-][^@]*)?@/i.test(address.trim());
}

/** Where a patient's reply reaches the practice (its own address), or null when there is none. */
export async function practiceReplyAddress() {
  const { email } = await practiceSender();
  return email && !isNoReplyAddress(email) ? email : null;
}

async function practiceSender() {
  const [p] = await db
    .select({ name: practiceSettings.name, email: practiceSettings.email })
    .from(practiceSettings)
    .where(eq(practiceSettings.id, 1));
  return { name: p?.name || "Dioptra", email: p?.email || "" };
}

type Prepared = Omit<Mail, "automatic" | "unsubscribe"> & {
  from: string;
  html: string;
  headers: Record<string, string>;
};

/**
 * The message as it goes out: sender name and Reply-To of the practice, the HTML part, and the
 * Auto-Submitted and List-Unsubscribe headers. Fields already set are kept.
 */
export async function prepareMail(mail: Mail): Promise<Prepared> {
  const { automatic = true, unsubscribe, ...rest } = mail;
  const practice = await practiceSender();
  const headers: Record<string, string> = { ...(rest.headers ?? {}) };
  if (automatic) headers["Auto-Submitted"] ??= "auto-generated";
  let optOut: string | undefined;
  if (unsubscribe) {
    optOut = unsubscribeUrl(unsubscribe.patientId, unsubscribe.list);
    headers["List-Unsubscribe"] = `<${optOut}>`;
    headers["List-Unsubscribe-Post"] = "List-Unsubscribe=One-Click";
  }
  return {
    ...rest,
    from: rest.from ?? `${quoted(practice.name)} <${fromAddress()}>`,
    ...(rest.replyTo || (practice.email && !isNoReplyAddress(practice.email))
      ? { replyTo: rest.replyTo ?? `${quoted(practice.name)} <${practice.email}>` }
      : {}),
    html:
      rest.html ??
      htmlFromText(rest.text, {
        practiceName: practice.name,
        unsubscribeUrl: optOut && !rest.text.includes(optOut) ? optOut : undefined,
      }),
    headers,
  };
}

/** Sends one message; throws when the relay refuses or cannot be reached. */
export async function sendMail(mail: Mail) {
  const info = await transport.sendMail(await prepareMail(mail));
  return { messageId: info.messageId };
}

export function absoluteUrl(path: string) {
  return new URL(path, env.APP_URL).toString();
}
