/**
 * Invoice and receipt PDFs (pdf-lib, Nunito Sans embedded as subset .woff), and the e-mails
 * that carry them: the invoice with its pay-by-link, and the receipt of a payment.
 */
import { readFile } from "node:fs/promises";
import { join } from "node:path";
import fontkit from "@pdf-lib/fontkit";
import { eq } from "drizzle-orm";
import { PDFDocument, rgb, type PDFFont, type PDFPage } from "pdf-lib";
import { invoices, payments } from "~/db/schema";
import { formatMoney, formatRate } from "~/lib/money";
import { audit } from "~/utils/audit.server";
import { db } from "~/utils/db.server";
import { sendMail } from "~/utils/mail.server";
import { payLinkUrl, signPayLink, PAY_LINK_TTL_MS } from "./checkout.server";
import { BillingError, invoiceDetail, invoiceLabel, practiceBilling } from "./invoices.server";

const FONT_DIR = join(process.cwd(), "node_modules/@fontsource/nunito-sans/files");
let fonts: Promise<{ regular: Buffer; bold: Buffer }> | null = null;
const loadFonts = () =>
  (fonts ??= Promise.all([readFile(join(FONT_DIR, "nunito-sans-latin-400-normal.woff")), readFile(join(FONT_DIR, "nunito-sans-latin-700-normal.woff"))]).then(([regular, bold]) => ({ regular, bold })));

export const METHOD_LABEL = { cash: "Cash", card_desk: "Card at the desk", card_online: "Card online" } as const;

export function formatDate(d: Date, timeZone: string, withTime = false) {
  return new Intl.DateTimeFormat("en-GB", { timeZone, day: "numeric", month: "long", year: "numeric", ...(withTime ? { hour: "2-digit", minute: "2-digit" } : {}) }).format(d);
}

type Detail = NonNullable<Awaited<ReturnType<typeof invoiceDetail>>>;

class Writer {
  y = 800;
  constructor(
    readonly page: PDFPage,
    readonly regular: PDFFont,
    readonly bold: PDFFont,
  ) {}
  text(s: string, x: number, opts: { size?: number; bold?: boolean; right?: boolean; color?: [number, number, number] } = {}) {
    const size = opts.size ?? 10;
    const font = opts.bold ? this.bold : this.regular;
    const w = font.widthOfTextAtSize(s, size);
    this.page.drawText(s, { x: opts.right ? x - w : x, y: this.y, size, font, color: rgb(...(opts.color ?? [0.09, 0.13, 0.17])) });
  }
  down(n = 14) {
    this.y -= n;
  }
  rule() {
    this.page.drawLine({ start: { x: 50, y: this.y + 4 }, end: { x: 545, y: this.y + 4 }, thickness: 0.6, color: rgb(0.8, 0.84, 0.87) });
    this.down(10);
  }
}

/** A PDF of the invoice (kind "invoice") or a receipt for one payment (kind "receipt"). */
export async function billingPdf(d: Detail, kind: "invoice" | "receipt", paymentId?: string): Promise<Uint8Array> {
  const practice = await practiceBilling();
  const tz = practice.timeZone;
  const cur = d.invoice.currency;
  const pdf = await PDFDocument.create();
  pdf.registerFontkit(fontkit);
  const f = await loadFonts();
  const regular = await pdf.embedFont(f.regular, { subset: true });
  const bold = await pdf.embedFont(f.bold, { subset: true });
  const label = invoiceLabel(d.invoice.number);
  pdf.setTitle(`${kind === "invoice" ? "Invoice" : "Receipt"} ${label} — ${practice.name}`);
  pdf.setAuthor(practice.name);
  const w = new Writer(pdf.addPage([595.28, 841.89]), regular, bold);

  w.text(practice.name, 50, { size: 18, bold: true, color: [0.04, 0.28, 0.3] });
  w.text(kind === "invoice" ? "INVOICE" : "RECEIPT", 545, { size: 16, bold: true, right: true });
  w.down(18);
  for (const line of [practice.addressLine1, practice.addressLine2, [practice.city, practice.postcode].filter(Boolean).join(" "), [practice.phone, practice.email].filter(Boolean).join(" · ")].filter(Boolean)) {
    w.text(line, 50, { size: 9 });
    w.down(12);
  }
  w.down(14);
  const top = w.y;
  w.text("Billed to", 50, { size: 9, bold: true });
  w.down(13);
  w.text(`${d.patient.firstName} ${d.patient.lastName}`, 50);
  w.down(13);
  for (const line of [d.patient.addressLine1, [d.patient.city, d.patient.postcode].filter(Boolean).join(" ")].filter(Boolean)) {
    w.text(line, 50);
    w.down(13);
  }
  const bottom = w.y;
  w.y = top;
  const meta: [string, string][] = [
    ["Invoice number", label],
    ["Issued", d.invoice.issuedAt ? formatDate(d.invoice.issuedAt, tz) : "not yet issued"],
    ["Status", STATUS_WORD[d.invoice.status]],
  ];
  for (const [k, v] of meta) {
    w.text(k, 380, { size: 9, bold: true });
    w.text(v, 545, { size: 10, right: true });
    w.down(13);
  }
  w.y = Math.min(bottom, w.y) - 16;

  if (kind === "invoice") {
    w.text("Code", 50, { size: 9, bold: true });
    w.text("Description", 110, { size: 9, bold: true });
    w.text("Qty", 360, { size: 9, bold: true, right: true });
    w.text("Unit price", 430, { size: 9, bold: true, right: true });
    w.text("Tax", 480, { size: 9, bold: true, right: true });
    w.text("Amount", 545, { size: 9, bold: true, right: true });
    w.down(6);
    w.rule();
    for (const l of d.lines) {
      w.text(l.code, 50, { size: 9 });
      w.text(l.description.length > 46 ? `${l.description.slice(0, 45)}…` : l.description, 110, { size: 9 });
      w.text(String(l.quantity), 360, { size: 9, right: true });
      w.text(formatMoney(l.unitPriceMinor, cur), 430, { size: 9, right: true });
      w.text(l.taxCategory === "standard" ? formatRate(d.invoice.taxRateBp) : "exempt", 480, { size: 9, right: true });
      w.text(formatMoney(l.grossMinor, cur), 545, { size: 9, right: true });
      w.down(14);
    }
    w.rule();
    const rows: [string, number, boolean?][] = [["Subtotal", d.invoice.subtotalMinor]];
    if (d.invoice.discountMinor) rows.push(["Discount", -d.invoice.discountMinor]);
    rows.push([`Tax (${formatRate(d.invoice.taxRateBp)} on standard-rated lines)`, d.invoice.taxMinor], ["Total", d.invoice.totalMinor, true], ["Paid", d.invoice.paidMinor], ["Amount due", d.invoice.totalMinor - d.invoice.paidMinor, true]);
    for (const [k, v, b] of rows) {
      w.text(k, 430, { size: b ? 11 : 10, bold: b, right: true });
      w.text(formatMoney(v, cur), 545, { size: b ? 11 : 10, bold: b, right: true });
      w.down(15);
    }
  } else {
    const p = d.payments.find((x) => x.id === paymentId);
    if (!p) throw new BillingError("There is no such payment on this invoice.", 404);
    w.text("Payment received", 50, { size: 12, bold: true });
    w.down(18);
    const rows: [string, string][] = [
      ["Amount", formatMoney(p.amountMinor, cur)],
      ["Method", METHOD_LABEL[p.method]],
      ["Received", p.receivedAt ? formatDate(p.receivedAt, tz, true) : "—"],
      ["For invoice", `${label} (total ${formatMoney(d.invoice.totalMinor, cur)})`],
      ["Still due on the invoice", formatMoney(d.invoice.totalMinor - d.invoice.paidMinor, cur)],
    ];
    if (p.refundedMinor) rows.push(["Refunded since", formatMoney(p.refundedMinor, cur)]);
    if (p.reference) rows.push(["Reference", p.reference]);
    for (const [k, v] of rows) {
      w.text(k, 50, { size: 10, bold: true });
      w.text(v, 220, { size: 10 });
      w.down(15);
    }
  }
  w.down(20);
  w.text("Thank you. Please quote the invoice number with any question about this bill.", 50, { size: 9, color: [0.29, 0.35, 0.4] });
  return pdf.save();
}

export const STATUS_WORD = { draft: "Draft", open: "Open — awaiting payment", partially_paid: "Part paid", paid: "Paid", void: "Void" } as const;

/** E-mails the invoice PDF and a signed, expiring pay-by-link to the patient. */
export async function emailInvoice(invoiceId: string, actorUserId: string, request?: Request) {
  const d = await invoiceDetail(invoiceId);
  if (!d) throw new BillingError("There is no such invoice.", 404);
  if (d.invoice.status !== "open" && d.invoice.status !== "partially_paid") throw new BillingError("Only an issued invoice with money due can be e-mailed for payment.", 409);
  if (!d.patient.email) throw new BillingError("This patient has no e-mail address. Add one to their record first.", 400);
  const practice = await practiceBilling();
  const token = signPayLink(invoiceId);
  const link = payLinkUrl(token);
  const label = invoiceLabel(d.invoice.number);
  const due = formatMoney(d.invoice.totalMinor - d.invoice.paidMinor, d.invoice.currency);
  const pdf = await billingPdf(d, "invoice");
  await sendMail({
    to: d.patient.email,
    subject: `Invoice ${label} from ${practice.name}`,
    text: [
      `Dear ${d.patient.firstName},`,
      "",
      `Your invoice ${label} from ${practice.name} is attached. The amount due is ${due}.`,
      "",
      "You can pay it securely by card here, without signing in:",
      link,
      "",
      `This link shows only this invoice and works for ${Math.round(PAY_LINK_TTL_MS / 86_400_000)} days. You can also pay at the practice.`,
      "",
      practice.name,
      [practice.phone, practice.email].filter(Boolean).join(" · "),
    ].join("\n"),
    attachments: [{ filename: `invoice-${label}.pdf`, content: Buffer.from(pdf), contentType: "application/pdf" }],
  });
  await db.update(invoices).set({ payLinkSentAt: new Date() }).where(eq(invoices.id, invoiceId));
  await audit({ action: "billing.invoice_emailed", actorUserId, entityType: "invoice", entityId: invoiceId, patientId: d.patient.id, detail: { to: d.patient.email }, request });
  return { to: d.patient.email };
}

/** E-mails the receipt of a succeeded payment; null when the patient has no e-mail address. */
export async function emailReceipt(paymentId: string, actorUserId: string | null = null) {
  const [p] = await db.select({ invoiceId: payments.invoiceId, status: payments.status }).from(payments).where(eq(payments.id, paymentId));
  if (!p || p.status !== "succeeded") throw new BillingError("Only a received payment has a receipt.", 409);
  const d = await invoiceDetail(p.invoiceId);
  if (!d) throw new BillingError("There is no such invoice.", 404);
  if (!d.patient.email) return null;
  const pay = d.payments.find((x) => x.id === paymentId)!;
  const practice = await practiceBilling();
  const label = invoiceLabel(d.invoice.number);
  const pdf = await billingPdf(d, "receipt", paymentId);
  await sendMail({
    to: d.patient.email,
    subject: `Receipt for your payment to ${practice.name}`,
    text: [
      `Dear ${d.patient.firstName},`,
      "",
      `Thank you. We have received ${formatMoney(pay.amountMinor, d.invoice.currency)} (${METHOD_LABEL[pay.method].toLowerCase()}) for invoice ${label}.`,
      d.invoice.totalMinor - d.invoice.paidMinor > 0 ? `${formatMoney(d.invoice.totalMinor - d.invoice.paidMinor, d.invoice.currency)} is still due on it.` : "The invoice is now paid in full.",
      "",
      "Your receipt is attached.",
      "",
      practice.name,
    ].join("\n"),
    attachments: [{ filename: `receipt-${label}.pdf`, content: Buffer.from(pdf), contentType: "application/pdf" }],
  });
  await db.update(payments).set({ receiptSentAt: new Date() }).where(eq(payments.id, paymentId));
  await audit({ action: "billing.receipt_emailed", actorUserId, entityType: "payment", entityId: paymentId, patientId: d.patient.id, detail: { to: d.patient.email } });
  return { to: d.patient.email };
}

/** Sends a receipt without letting a mail fault undo the payment that has already been recorded. */
export async function emailReceiptQuietly(paymentId: string, actorUserId: string | null = null) {
  try {
    return await emailReceipt(paymentId, actorUserId);
  } catch (error) {
    console.error(`[billing] receipt for payment ${paymentId} not sent:`, error);
    return null;
  }
}
