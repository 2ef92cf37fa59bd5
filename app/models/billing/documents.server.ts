/**
 * Invoice and receipt PDFs (the shared PdfWriter: embedded font chain, wrapping by measured
 * width, page breaks with the letterhead and the lines' header repeated), and the e-mails that
 * carry them: the invoice with its pay-by-link, and the receipt of a payment.
 */
import { eq } from "drizzle-orm";
import { invoices, payments, sites } from "~/db/schema";
import { formatDate, formatMoney } from "~/lib/format";
import { formatRate } from "~/lib/money";
import { audit } from "~/utils/audit.server";
import { db } from "~/utils/db.server";
import { sendMail } from "~/utils/mail.server";
import { siteAddress } from "~/models/schedule/sites.server";
import { PdfWriter } from "~/utils/pdf.server";
import { payLinkUrl, signPayLink, PAY_LINK_TTL_MS } from "./checkout.server";
import { BillingError, invoiceDetail, invoiceLabel, practiceBilling } from "./invoices.server";

export const METHOD_LABEL = { cash: "Cash", card_desk: "Card at the desk", card_online: "Card online" } as const;

type Detail = NonNullable<Awaited<ReturnType<typeof invoiceDetail>>>;

/** The site that issued the invoice: its address and phone head the PDFs and sign the e-mails. */
export async function invoiceSiteOf(d: Detail) {
  const [site] = await db.select().from(sites).where(eq(sites.id, d.invoice.siteId));
  if (!site) throw new Error(`invoice ${d.invoice.id} names a site that does not exist`);
  return site;
}

/** "Practice · Site", then the site's address and phone (the practice's phone if the site has none). */
function siteSignature(practice: { name: string; phone: string; email: string }, site: typeof sites.$inferSelect) {
  return [
    `${practice.name} · ${site.name}`,
    siteAddress(site),
    [site.phone || practice.phone, practice.email].filter(Boolean).join(" · "),
  ].filter(Boolean);
}

/** A PDF of the invoice (kind "invoice") or a receipt for one payment (kind "receipt"). */
export async function billingPdf(d: Detail, kind: "invoice" | "receipt", paymentId?: string): Promise<Uint8Array> {
  const practice = await practiceBilling();
  const tz = practice.timeZone;
  const cur = d.invoice.currency;
  const label = invoiceLabel(d.invoice.number);
  const payment = kind === "receipt" ? d.payments.find((x) => x.id === paymentId) : undefined;
  if (kind === "receipt" && !payment)
    throw new BillingError("There is no such payment on this invoice.", { status: 404 });
  // The letterhead is the issuing site's: its name, address and phone.
  const site = await invoiceSiteOf(d);
  const letterhead = {
    name: practice.name,
    lines: [
      site.name,
      [site.addressLine1, site.addressLine2, [site.city, site.postcode].filter(Boolean).join(" ")]
        .filter(Boolean)
        .join(", "),
      [site.phone || practice.phone, practice.email].filter(Boolean).join(" · "),
    ].filter(Boolean),
  };
  const pdf = await PdfWriter.create({
    title: `${kind === "invoice" ? "Invoice" : "Receipt"} ${label} — ${practice.name}`,
    author: practice.name,
    practice: letterhead,
    label: kind === "invoice" ? "INVOICE" : "RECEIPT",
  });
  const patientName = `${d.patient.firstName} ${d.patient.lastName}`;
  const patientAddress = [d.patient.addressLine1, [d.patient.city, d.patient.postcode].filter(Boolean).join(" ")]
    .filter(Boolean)
    .join("\n");
  pdf.keyValues([
    ["Billed to", [patientName, patientAddress].filter(Boolean).join("\n")],
    ["Invoice number", label],
    ["Issued", d.invoice.issuedAt ? formatDate(d.invoice.issuedAt, { timeZone: tz, style: "long" }) : "not yet issued"],
    ["Status", STATUS_WORD[d.invoice.status]],
  ]);

  if (kind === "invoice") {
    pdf.table({
      size: 9,
      columns: [
        { header: "Code", width: 74 },
        { header: "Description", width: 166 },
        { header: "Qty", width: 35, align: "right" },
        { header: "Unit price", width: 75, align: "right" },
        { header: "Tax", width: 55, align: "right" },
        { header: "Amount", width: 90, align: "right" },
      ],
      rows: d.lines.map((l) => [
        l.code,
        l.description,
        String(l.quantity),
        formatMoney(l.unitPriceMinor, cur),
        l.taxCategory === "standard" ? formatRate(d.invoice.taxRateBp) : "exempt",
        formatMoney(l.grossMinor, cur),
      ]),
    });
    const rows: { label: string; value: string; bold?: boolean }[] = [
      { label: "Subtotal", value: formatMoney(d.invoice.subtotalMinor, cur) },
    ];
    if (d.invoice.discountMinor) rows.push({ label: "Discount", value: formatMoney(-d.invoice.discountMinor, cur) });
    rows.push(
      {
        label: `Tax (${formatRate(d.invoice.taxRateBp)} on standard-rated lines)`,
        value: formatMoney(d.invoice.taxMinor, cur),
      },
      { label: "Total", value: formatMoney(d.invoice.totalMinor, cur), bold: true },
      { label: "Paid", value: formatMoney(d.invoice.paidMinor, cur) },
      { label: "Amount due", value: formatMoney(d.invoice.totalMinor - d.invoice.paidMinor, cur), bold: true },
    );
    pdf.totals(rows);
  } else {
    const p = payment!;
    pdf.heading("Payment received", 12);
    const rows: [string, string][] = [
      ["Amount", formatMoney(p.amountMinor, cur)],
      ["Method", METHOD_LABEL[p.method]],
      ["Received", p.receivedAt ? formatDate(p.receivedAt, { timeZone: tz, style: "long", time: true }) : "—"],
      ["For invoice", `${label} (total ${formatMoney(d.invoice.totalMinor, cur)})`],
      ["Still due on the invoice", formatMoney(d.invoice.totalMinor - d.invoice.paidMinor, cur)],
    ];
    if (p.refundedMinor) rows.push(["Refunded since", formatMoney(p.refundedMinor, cur)]);
    if (p.reference) rows.push(["Reference", p.reference]);
    pdf.keyValues(rows, 150);
  }
  pdf.spacer(10);
  pdf.paragraph("Thank you. Please quote the invoice number with any question about this bill.", {
    size: 9,
    muted: true,
  });
  return pdf.finish();
}

export const STATUS_WORD = {
  draft: "Draft",
  open: "Open — awaiting payment",
  partially_paid: "Part paid",
  paid: "Paid",
  void: "Void",
} as const;

/** E-mails the invoice PDF and a signed, expiring pay-by-link to the patient. */
export async function emailInvoice(invoiceId: string, actorUserId: string, request?: Request) {
  const d = await invoiceDetail(invoiceId);
  if (!d) throw new BillingError("There is no such invoice.", { status: 404 });
  if (d.invoice.status !== "open" && d.invoice.status !== "partially_paid")
    throw new BillingError("Only an issued invoice with money due can be e-mailed for payment.", { status: 409 });
  if (!d.patient.email)
    throw new BillingError("This patient has no e-mail address. Add one to their record first.", { status: 400 });
  const practice = await practiceBilling();
  const token = signPayLink(invoiceId);
  const link = payLinkUrl(token);
  const label = invoiceLabel(d.invoice.number);
  const due = formatMoney(d.invoice.totalMinor - d.invoice.paidMinor, d.invoice.currency);
  const pdf = await billingPdf(d, "invoice");
  const site = await invoiceSiteOf(d);
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
      ...siteSignature(practice, site),
    ].join("\n"),
    attachments: [{ filename: `invoice-${label}.pdf`, content: Buffer.from(pdf), contentType: "application/pdf" }],
  });
  await db.update(invoices).set({ payLinkSentAt: new Date() }).where(eq(invoices.id, invoiceId));
  await audit({
    action: "billing.invoice_emailed",
    actorUserId,
    entityType: "invoice",
    entityId: invoiceId,
    patientId: d.patient.id,
    detail: { to: d.patient.email },
    request,
  });
  return { to: d.patient.email };
}

/** E-mails the receipt of a succeeded payment; null when the patient has no e-mail address. */
export async function emailReceipt(paymentId: string, actorUserId: string | null = null) {
  const [p] = await db
    .select({ invoiceId: payments.invoiceId, status: payments.status })
    .from(payments)
    .where(eq(payments.id, paymentId));
  if (!p || p.status !== "succeeded") throw new BillingError("Only a received payment has a receipt.", { status: 409 });
  const d = await invoiceDetail(p.invoiceId);
  if (!d) throw new BillingError("There is no such invoice.", { status: 404 });
  if (!d.patient.email) return null;
  const pay = d.payments.find((x) => x.id === paymentId)!;
  const practice = await practiceBilling();
  const label = invoiceLabel(d.invoice.number);
  const pdf = await billingPdf(d, "receipt", paymentId);
  const site = await invoiceSiteOf(d);
  await sendMail({
    to: d.patient.email,
    subject: `Receipt for your payment to ${practice.name}`,
    text: [
      `Dear ${d.patient.firstName},`,
      "",
      `Thank you. We have received ${formatMoney(pay.amountMinor, d.invoice.currency)} (${METHOD_LABEL[pay.method].toLowerCase()}) for invoice ${label}.`,
      d.invoice.totalMinor - d.invoice.paidMinor > 0
        ? `${formatMoney(d.invoice.totalMinor - d.invoice.paidMinor, d.invoice.currency)} is still due on it.`
        : "The invoice is now paid in full.",
      "",
      "Your receipt is attached.",
      "",
      ...siteSignature(practice, site),
    ].join("\n"),
    attachments: [{ filename: `receipt-${label}.pdf`, content: Buffer.from(pdf), contentType: "application/pdf" }],
  });
  await db.update(payments).set({ receiptSentAt: new Date() }).where(eq(payments.id, paymentId));
  await audit({
    action: "billing.receipt_emailed",
    actorUserId,
    entityType: "payment",
    entityId: paymentId,
    patientId: d.patient.id,
    detail: { to: d.patient.email },
  });
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
