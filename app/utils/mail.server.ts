import nodemailer from "nodemailer";
import { env } from "./env.server";

export type MailAttachment = { filename: string; content: Buffer | string; contentType?: string };
export type Mail = { to: string; subject: string; text: string; html?: string; attachments?: MailAttachment[] };

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

/** Sends one message; throws when the relay refuses or cannot be reached. */
export async function sendMail(mail: Mail) {
  const info = await transport.sendMail({ from: env.MAIL_FROM, ...mail });
  return { messageId: info.messageId };
}

export function absoluteUrl(path: string) {
  return new URL(path, env.APP_URL).toString();
}
