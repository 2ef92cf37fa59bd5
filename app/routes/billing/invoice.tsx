import { activeFees } from "~/models/settings/fees.server";
import { parseWithZod } from "@conform-to/zod/v4";
import { data, Link, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/invoice";
import { BillingNav, InvoiceStatusBadge } from "~/components/billing/invoice-status";
import { emailInvoice, emailReceipt, emailReceiptQuietly, METHOD_LABEL } from "~/models/billing/documents.server";
import {
  addLines,
  BILLING_ROLES,
  BillingError,
  deleteDraft,
  invoiceDetail,
  invoiceLabel,
  issueInvoice,
  practiceBilling,
  recordDeskPayment,
  refundPayment,
  removeLine,
  setDiscount,
  voidInvoice,
} from "~/models/billing/invoices.server";
import { useResetAfterSuccess } from "~/components/forms";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { PageHeader } from "~/components/page-header";
import { InvoiceActions } from "./invoice-actions";
import { InvoiceLinesCard, InvoicePaymentsCard } from "./invoice-parts";
import { buttonClass } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { formatDate, formatMoney } from "~/lib/format";
import { formatRate, minorToDecimal, parseMoney } from "~/lib/money";
import { audit } from "~/utils/audit.server";
import { requireRole } from "~/utils/auth.server";
import { redirectWithToast } from "~/utils/toast.server";
import { decimalField } from "~/utils/number-field";
import { parseDecimal } from "~/lib/numbers/decimal";
import { notFound } from "~/utils/failure.server";

const money = z.string({ error: "Give an amount." }).trim().min(1, "Give an amount.");
const schema = z.discriminatedUnion("intent", [
  z.object({
    intent: z.literal("add-line"),
    feeItemId: z.uuid({ error: "Choose a fee." }),
    quantity: decimalField(
      "A whole number from 1 to 1000.",
      z.number().int("A whole number from 1 to 1000.").min(1, "At least 1.").max(1000, "At most 1000."),
    ),
  }),
  z.object({ intent: z.literal("remove-line"), lineId: z.uuid() }),
  z.object({
    intent: z.literal("discount"),
    discountKind: z.enum(["none", "percent", "amount"]),
    discountValue: z.string().trim().max(20).default(""),
  }),
  z.object({ intent: z.literal("issue") }),
  z.object({ intent: z.literal("discard") }),
  z.object({
    intent: z.literal("void"),
    reason: z.string({ error: "Say why it is voided." }).trim().min(3, "Say why it is voided.").max(200),
  }),
  z.object({
    intent: z.literal("pay-desk"),
    method: z.enum(["cash", "card_desk"], { error: "Choose cash or card." }),
    amount: money,
    reference: z.string().trim().max(80).default(""),
    confirmRepeat: z.literal("yes").optional(),
  }),
  z.object({ intent: z.literal("email") }),
  z.object({ intent: z.literal("receipt"), paymentId: z.uuid() }),
  z.object({
    intent: z.literal("refund"),
    paymentId: z.uuid(),
    amount: money,
    reason: z.string({ error: "Give a reason." }).trim().min(2, "Give a reason.").max(200),
  }),
]);

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, BILLING_ROLES);
  if (!z.uuid().safeParse(params.invoiceId).success) notFound("There is no such invoice.");
  const d = await invoiceDetail(params.invoiceId);
  if (!d) notFound("There is no such invoice.");
  const practice = await practiceBilling();
  const fees = d.invoice.status === "draft" ? await activeFees() : [];
  await audit({
    action: "billing.invoice_viewed",
    actorUserId: user.id,
    entityType: "invoice",
    entityId: d.invoice.id,
    patientId: d.patient.id,
    request,
  });
  const tz = practice.timeZone;
  const cur = d.invoice.currency;
  return {
    invoice: {
      id: d.invoice.id,
      label: invoiceLabel(d.invoice.number),
      status: d.invoice.status,
      currency: cur,
      issuedAt: d.invoice.issuedAt ? formatDate(d.invoice.issuedAt, { timeZone: tz, style: "long" }) : null,
      createdAt: formatDate(d.invoice.createdAt, { timeZone: tz, style: "long" }),
      taxRate: formatRate(d.invoice.taxRateBp),
      discountKind: d.invoice.discountKind,
      discountValue:
        d.invoice.discountKind === "percent"
          ? String(d.invoice.discountValue / 100)
          : d.invoice.discountKind === "amount"
            ? minorToDecimal(d.invoice.discountValue, cur)
            : "",
      subtotal: formatMoney(d.invoice.subtotalMinor, cur),
      discount: d.invoice.discountMinor ? formatMoney(-d.invoice.discountMinor, cur) : null,
      tax: formatMoney(d.invoice.taxMinor, cur),
      total: formatMoney(d.invoice.totalMinor, cur),
      paid: formatMoney(d.invoice.paidMinor, cur),
      dueMinor: d.invoice.totalMinor - d.invoice.paidMinor,
      due: formatMoney(d.invoice.totalMinor - d.invoice.paidMinor, cur),
      dueDecimal: minorToDecimal(d.invoice.totalMinor - d.invoice.paidMinor, cur),
      voidReason: d.invoice.voidReason,
      payLinkSentAt: d.invoice.payLinkSentAt
        ? formatDate(d.invoice.payLinkSentAt, { timeZone: tz, style: "long", time: true })
        : null,
      examId: d.invoice.examId,
    },
    patient: { id: d.patient.id, name: `${d.patient.firstName} ${d.patient.lastName}`, email: d.patient.email },
    lines: d.lines.map((l) => ({
      id: l.id,
      code: l.code,
      description: l.description,
      quantity: l.quantity,
      unit: formatMoney(l.unitPriceMinor, cur),
      gross: formatMoney(l.grossMinor, cur),
      tax: l.taxCategory === "standard" ? formatMoney(l.taxMinor, cur) : "exempt",
    })),
    payments: d.payments.map((p) => ({
      id: p.id,
      method: METHOD_LABEL[p.method],
      status: p.status,
      amount: formatMoney(p.amountMinor, cur),
      refundable: p.status === "succeeded" ? p.amountMinor - p.refundedMinor : 0,
      refundableText: formatMoney(p.amountMinor - p.refundedMinor, cur),
      refunded: p.refundedMinor ? formatMoney(p.refundedMinor, cur) : null,
      when: formatDate(p.receivedAt ?? p.createdAt, { timeZone: tz, style: "long", time: true }),
      reference: p.reference,
      problem: p.problem,
      receiptSent: Boolean(p.receiptSentAt),
    })),
    refunds: d.refunds.map((r) => ({
      id: r.id,
      paymentId: r.paymentId,
      amount: formatMoney(r.amountMinor, cur),
      reason: r.reason,
      when: formatDate(r.createdAt, { timeZone: tz, style: "long", time: true }),
    })),
    fees: fees.map((f) => ({ id: f.id, label: `${f.code} — ${f.description} (${formatMoney(f.priceMinor, cur)})` })),
  };
}

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requireRole(request, BILLING_ROLES);
  const invoiceId = params.invoiceId;
  if (!z.uuid().safeParse(invoiceId).success) notFound("There is no such invoice.");
  const submission = parseWithZod(await request.formData(), { schema });
  if (submission.status !== "success") return data(submission.reply(), { status: 400 });
  const v = submission.value;
  const here = `/billing/invoices/${invoiceId}`;
  const practice = await practiceBilling();
  const currency = practice.currency;
  const fail = (field: string, message: string, status = 400) =>
    data(submission.reply({ fieldErrors: { [field]: [message] } }), { status });
  try {
    switch (v.intent) {
      case "add-line":
        await addLines(invoiceId, [{ feeItemId: v.feeItemId, quantity: v.quantity }], user.id, request);
        return redirectWithToast(here, { title: "Line added" });
      case "remove-line":
        await removeLine(invoiceId, v.lineId, user.id, request);
        return redirectWithToast(here, { title: "Line removed" });
      case "discount": {
        if (v.discountKind === "none") await setDiscount(invoiceId, { kind: "none" }, user.id, request);
        else if (v.discountKind === "percent") {
          const pct = parseDecimal(v.discountValue);
          if (pct === null || !/^\d{1,3}(\.\d{1,2})?$/.test(v.discountValue) || pct > 100)
            return fail("discountValue", "Give a percentage from 0 to 100, e.g. 10 or 12.5.");
          await setDiscount(invoiceId, { kind: "percent", basisPoints: Math.round(pct * 100) }, user.id, request);
        } else {
          const minor = parseMoney(v.discountValue, currency);
          if (minor === null) return fail("discountValue", `Give an amount in ${currency}, e.g. 10.00.`);
          await setDiscount(invoiceId, { kind: "amount", minor }, user.id, request);
        }
        return redirectWithToast(here, { title: "Discount updated" });
      }
      case "issue": {
        const { number } = await issueInvoice(invoiceId, user.id, request);
        return redirectWithToast(here, { title: `Issued as ${invoiceLabel(number)}` });
      }
      case "discard":
        await deleteDraft(invoiceId, user.id, request);
        return redirectWithToast("/billing", { title: "Draft discarded" });
      case "void":
        await voidInvoice(invoiceId, v.reason, user.id, request);
        return redirectWithToast(here, {
          kind: "info",
          title: "Invoice voided",
          description: "Its number stays used, so the sequence has no gap.",
        });
      case "pay-desk": {
        const minor = parseMoney(v.amount, currency);
        if (minor === null || minor <= 0) return fail("amount", `Give an amount in ${currency}, e.g. 65.00.`);
        const { paymentId } = await recordDeskPayment({
          invoiceId,
          method: v.method,
          amountMinor: minor,
          reference: v.reference,
          confirmRepeat: v.confirmRepeat === "yes",
          actorUserId: user.id,
          request,
        });
        const receipt = await emailReceiptQuietly(paymentId, user.id);
        return redirectWithToast(here, {
          title: `${formatMoney(minor, currency)} recorded`,
          description: receipt
            ? `Receipt e-mailed to ${receipt.to}.`
            : "No receipt e-mailed (no address on file, or mail is down).",
        });
      }
      case "email": {
        const { to } = await emailInvoice(invoiceId, user.id, request);
        return redirectWithToast(here, {
          title: `Invoice e-mailed to ${to}`,
          description: "With a payment link that works for 14 days.",
        });
      }
      case "receipt": {
        const sent = await emailReceipt(v.paymentId, user.id);
        return redirectWithToast(
          here,
          sent
            ? { title: `Receipt e-mailed to ${sent.to}` }
            : { kind: "warning", title: "No e-mail address on file for this patient" },
        );
      }
      case "refund": {
        const minor = parseMoney(v.amount, currency);
        if (minor === null || minor <= 0) return fail("amount", `Give an amount in ${currency}, e.g. 10.00.`);
        await refundPayment({
          paymentId: v.paymentId,
          amountMinor: minor,
          reason: v.reason,
          actorUserId: user.id,
          request,
        });
        return redirectWithToast(here, { title: `${formatMoney(minor, currency)} refunded` });
      }
    }
  } catch (error) {
    if (error instanceof BillingError) {
      if (error.status === 404) notFound(error.message);
      return data(
        submission.reply({
          fieldErrors: error.field ? { [error.field]: [error.message] } : {},
          formErrors: error.field ? [] : [error.message],
        }),
        { status: error.status },
      );
    }
    throw error;
  }
}

type Reply = { initialValue?: Record<string, unknown>; error?: Record<string, string[] | null> } | undefined;

export default function InvoicePage({ loaderData, actionData }: Route.ComponentProps) {
  const { invoice, patient, payments } = loaderData;
  const navigation = useNavigation();
  const busy = (intent: string) => navigation.state === "submitting" && navigation.formData?.get("intent") === intent;
  const payForm = useResetAfterSuccess("pay-desk");
  const reply = actionData as Reply;
  const lastIntent = reply?.initialValue?.intent;
  const err = (intent: string, field: string) =>
    lastIntent === intent ? (reply?.error?.[field] ?? undefined) : undefined;
  const formError = reply?.error?.[""];
  const isDraft = invoice.status === "draft";
  const payable = invoice.status === "open" || invoice.status === "partially_paid";
  return (
    <>
      <PageHeader
        title={
          <span className="flex flex-wrap items-center gap-3">
            Invoice {invoice.label} <InvoiceStatusBadge status={invoice.status} />
          </span>
        }
        description={
          <>
            {patient.name} · {invoice.issuedAt ? `issued ${invoice.issuedAt}` : `draft of ${invoice.createdAt}`}
          </>
        }
        actions={
          !isDraft ? (
            <a href={`/billing/invoices/${invoice.id}/invoice.pdf`} className={buttonClass("secondary")}>
              Invoice PDF
            </a>
          ) : null
        }
      />
      <BillingNav />
      {formError?.length ? (
        <div className="mb-6">
          <Notice tone="error" title="Not done">
            {formError.join(" ")}
          </Notice>
        </div>
      ) : null}
      {invoice.status === "void" ? (
        <div className="mb-6">
          <Notice tone="warning" title="Void">
            {invoice.voidReason}
          </Notice>
        </div>
      ) : null}
      {payments.some((p) => p.status === "flagged") ? (
        <div className="mb-6">
          <Notice tone="error" title="A payment was flagged and not accepted">
            Stripe reported a payment that does not match this invoice. It was not counted; check it in Stripe and
            refund or reconcile it by hand.
          </Notice>
        </div>
      ) : null}
      <div className="grid gap-6 lg:grid-cols-[2fr_1fr]">
        <div className="space-y-6">
          <InvoiceLinesCard d={loaderData} isDraft={isDraft} err={err} busy={busy} />

          {!isDraft ? (
            <InvoicePaymentsCard
              d={loaderData}
              isDraft={isDraft}
              err={err}
              busy={busy}
              refundFor={reply?.initialValue?.paymentId}
            />
          ) : null}
        </div>

        <div className="space-y-6">
          <InvoiceActions d={loaderData} isDraft={isDraft} payable={payable} err={err} busy={busy} payForm={payForm} />
          <p className="text-sm">
            <Link to="/billing" className="font-semibold text-accent-700 underline underline-offset-4">
              Back to invoices
            </Link>
          </p>
        </div>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = ({ data }) => [{ title: `Invoice ${data?.invoice.label ?? ""} · Dioptra` }];

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
