/**
 * E-mails about orders: the order form to the lab, and "ready to collect" to the patient. Each is
 * an order_messages row queued in the transaction of the move that causes it, sent at most once
 * by the job (the row is locked, sent and marked in one transaction); a patient who has turned
 * e-mails off, or has no address, is skipped with the reason kept.
 */
import { and, eq, inArray, sql } from "drizzle-orm";
import { labs, opticalOrders, orderMessages, patients, practiceSettings } from "~/db/schema";
import { orderLabel } from "~/lib/orders/states";
import { db, type Tx } from "~/utils/db.server";
import { defineJob } from "~/utils/jobs.server";
import { sendMail, type Mail } from "~/utils/mail.server";
import { buildOrderPdf } from "./order-pdf.server";
import { orderDetail } from "./orders.server";

export const ORDER_MAIL_QUEUE = "order-mail";
const QUEUE_DEFAULTS = { retryLimit: 8, retryDelay: 30, retryBackoff: true, expireInSeconds: 120 };

type Sender = (mail: Mail) => Promise<unknown>;
let sender: Sender = sendMail;
/** Points order e-mails at another transport (tests). */
export function useOrderMailSender(next: Sender | null) {
  sender = next ?? sendMail;
}

export const orderMail = defineJob<{ messageId: string }>(
  ORDER_MAIL_QUEUE,
  async (data, job) => {
    await deliverOrderMessage(data.messageId, job);
  },
  QUEUE_DEFAULTS,
);

export async function queueOrderMessage(
  tx: Tx,
  orderId: string,
  kind: "lab_order" | "patient_ready",
  recipient: string | null,
) {
  const [m] = await tx.insert(orderMessages).values({ orderId, kind, recipient }).returning({ id: orderMessages.id });
  await orderMail.enqueue({ messageId: m!.id }, { tx, singletonKey: m!.id });
  return m!.id;
}

/** One attempt at once so a working relay shows "sent" straight away; the queued job is the retry. */
export async function tryOrderMessageNow(messageId: string) {
  if (!messageId) return;
  try {
    await deliverOrderMessage(messageId, { retryCount: 0, retryLimit: QUEUE_DEFAULTS.retryLimit });
  } catch {
    // Left queued with its error; the job retries it.
  }
}

async function compose(m: typeof orderMessages.$inferSelect): Promise<Mail | { skip: string }> {
  const d = await orderDetail(m.orderId);
  if (!d) return { skip: "order deleted" };
  const [p] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
  const ref = orderLabel(d.order.number);
  const sign = `${p?.name ?? ""}${p?.phone ? `\nTel ${p.phone}` : ""}`;
  if (m.kind === "lab_order") {
    const [lab] = await db.select().from(labs).where(eq(labs.id, d.order.labId));
    const remake = d.events.some((e) => e.toState === "remake");
    const pdf = await buildOrderPdf(d);
    return {
      to: m.recipient ?? lab!.email,
      subject: `${remake ? "Remake: " : ""}${d.order.kind === "spectacles" ? "Spectacle" : "Contact-lens"} order ${ref} from ${p?.name ?? "the practice"}`,
      text: `Dear ${lab?.name ?? "colleague"},\n\nPlease find attached ${remake ? "a remake of " : ""}order ${ref}. Quote the reference on the delivery note.\n\nWith thanks,\n${sign}\n`,
      attachments: [{ filename: `order-${ref}.pdf`, content: Buffer.from(pdf), contentType: "application/pdf" }],
    };
  }
  const [pt] = await db
    .select({ email: patients.email, remindersByEmail: patients.remindersByEmail, firstName: patients.firstName })
    .from(patients)
    .where(eq(patients.id, d.order.patientId));
  if (!pt?.remindersByEmail) return { skip: "patient has turned e-mails off" };
  if (!pt.email) return { skip: "no e-mail address on record" };
  const what = d.order.kind === "spectacles" ? "spectacles are" : "contact lenses are";
  return {
    to: pt.email,
    subject: `Your ${what.split(" ")[0]} are ready to collect`,
    text: `Dear ${pt.firstName},\n\nYour ${what} ready to collect from ${p?.name ?? "the practice"} (order ${ref}).${p?.addressLine1 ? `\n\n${[p.addressLine1, p.city, p.postcode].filter(Boolean).join(", ")}` : ""}\n\nWe will check the fit with you when you collect them.\n\n${sign}\n\nYou receive this e-mail because you chose appointment e-mails in your patient portal; you can turn them off there.\n`,
  };
}

/** The job: send one message at most once. Throws on a failed send so the queue retries it. */
export async function deliverOrderMessage(messageId: string, job: { retryCount: number; retryLimit: number }) {
  try {
    return await db.transaction(async (tx) => {
      const [m] = await tx.select().from(orderMessages).where(eq(orderMessages.id, messageId)).for("update");
      if (!m || m.status === "sent" || m.status === "skipped") return "already done";
      const [o] = await tx
        .select({ state: opticalOrders.state })
        .from(opticalOrders)
        .where(eq(opticalOrders.id, m.orderId));
      if (o?.state === "cancelled") {
        await tx
          .update(orderMessages)
          .set({ status: "skipped", skippedReason: "order cancelled before sending" })
          .where(eq(orderMessages.id, messageId));
        return "skipped";
      }
      const mail = await compose(m);
      if ("skip" in mail) {
        await tx
          .update(orderMessages)
          .set({ status: "skipped", skippedReason: mail.skip })
          .where(eq(orderMessages.id, messageId));
        return "skipped";
      }
      await sender(mail);
      await tx
        .update(orderMessages)
        .set({ status: "sent", sentAt: new Date(), recipient: mail.to, attempts: m.attempts + 1, lastError: null })
        .where(eq(orderMessages.id, messageId));
      return "sent";
    });
  } catch (error) {
    const last = job.retryCount >= job.retryLimit;
    await db
      .update(orderMessages)
      .set({
        attempts: sql`${orderMessages.attempts} + 1`,
        lastError: ((error as Error).message || String(error)).slice(0, 500),
        status: last ? "failed" : "queued",
      })
      .where(and(eq(orderMessages.id, messageId), inArray(orderMessages.status, ["queued", "failed"])));
    throw error;
  }
}
