import { parseWithZod } from "@conform-to/zod/v4";
import { asc, eq } from "drizzle-orm";
import { data, Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/invoice";
import { BillingNav, InvoiceStatusBadge, PaymentStatusBadge } from "~/components/billing/invoice-status";
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
import { ErrorList, useResetAfterSuccess } from "~/components/forms";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { PageHeader } from "~/components/page-header";
import { Button, buttonClass } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input, Select } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";
import { feeItems } from "~/db/schema";
import { formatDate, formatMoney } from "~/lib/format";
import { formatRate, minorToDecimal, parseMoney } from "~/lib/money";
import { audit } from "~/utils/audit.server";
import { requireRole } from "~/utils/auth.server";
import { db } from "~/utils/db.server";
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
  const fees =
    d.invoice.status === "draft"
      ? await db
          .select({
            id: feeItems.id,
            code: feeItems.code,
            description: feeItems.description,
            priceMinor: feeItems.priceMinor,
          })
          .from(feeItems)
          .where(eq(feeItems.active, true))
          .orderBy(asc(feeItems.code))
      : [];
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
  const { invoice, patient, lines, payments, refunds, fees } = loaderData;
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
          <Card title="Lines">
            <div className="overflow-x-auto">
              <table className="w-full text-left text-sm">
                <thead className="border-b border-line text-muted">
                  <tr>
                    <th className="py-2 pr-3 font-semibold">Code</th>
                    <th className="py-2 pr-3 font-semibold">Description</th>
                    <th className="py-2 pr-3 text-right font-semibold">Qty</th>
                    <th className="py-2 pr-3 text-right font-semibold">Unit price</th>
                    <th className="py-2 pr-3 text-right font-semibold">Tax</th>
                    <th className="py-2 pr-3 text-right font-semibold">Amount</th>
                    {isDraft ? (
                      <th className="py-2 font-semibold">
                        <span className="sr-only">Remove</span>
                      </th>
                    ) : null}
                  </tr>
                </thead>
                <tbody className="divide-y divide-line">
                  {lines.map((l) => (
                    <tr key={l.id}>
                      <td className="py-2 pr-3 font-mono">{l.code}</td>
                      <td className="py-2 pr-3">{l.description}</td>
                      <td className="py-2 pr-3 text-right tabular-nums">{l.quantity}</td>
                      <td className="py-2 pr-3 text-right tabular-nums">{l.unit}</td>
                      <td className="py-2 pr-3 text-right tabular-nums">{l.tax}</td>
                      <td className="py-2 pr-3 text-right tabular-nums">{l.gross}</td>
                      {isDraft ? (
                        <td className="py-2">
                          <Form method="post">
                            <input type="hidden" name="intent" value="remove-line" />
                            <input type="hidden" name="lineId" value={l.id} />
                            <Button type="submit" variant="ghost" className="px-2 py-1 text-red-800">
                              Remove<span className="sr-only"> {l.description}</span>
                            </Button>
                          </Form>
                        </td>
                      ) : null}
                    </tr>
                  ))}
                </tbody>
              </table>
            </div>
            <dl className="mt-4 ml-auto grid max-w-xs grid-cols-2 gap-y-1 text-sm" aria-label="Totals">
              <dt className="text-muted">Subtotal</dt>
              <dd className="text-right tabular-nums">{invoice.subtotal}</dd>
              {invoice.discount ? (
                <>
                  <dt className="text-muted">Discount</dt>
                  <dd className="text-right tabular-nums">{invoice.discount}</dd>
                </>
              ) : null}
              <dt className="text-muted">Tax ({invoice.taxRate})</dt>
              <dd className="text-right tabular-nums">{invoice.tax}</dd>
              <dt className="font-semibold">Total</dt>
              <dd className="text-right font-semibold tabular-nums">{invoice.total}</dd>
              <dt className="text-muted">Paid</dt>
              <dd className="text-right tabular-nums">{invoice.paid}</dd>
              <dt className="font-semibold">Amount due</dt>
              <dd className="text-right font-semibold tabular-nums" data-testid="amount-due">
                {invoice.due}
              </dd>
            </dl>
            {isDraft ? (
              <Form method="post" className="mt-6 flex flex-wrap items-end gap-3 border-t border-line pt-4">
                <input type="hidden" name="intent" value="add-line" />
                <div className="min-w-64 flex-1">
                  <label htmlFor="feeItemId" className="mb-1 block text-sm font-semibold">
                    Add from the fee schedule
                  </label>
                  <Select id="feeItemId" name="feeItemId" defaultValue="">
                    <option value="">Choose…</option>
                    {fees.map((f) => (
                      <option key={f.id} value={f.id}>
                        {f.label}
                      </option>
                    ))}
                  </Select>
                  <ErrorList errors={err("add-line", "feeItemId")} />
                </div>
                <div>
                  <label htmlFor="quantity" className="mb-1 block text-sm font-semibold">
                    Quantity
                  </label>
                  <Input id="quantity" name="quantity" type="number" min={1} defaultValue={1} className="w-24" />
                  <ErrorList errors={err("add-line", "quantity")} />
                </div>
                <Button type="submit" variant="secondary" pending={busy("add-line")}>
                  Add line
                </Button>
              </Form>
            ) : null}
          </Card>

          {!isDraft ? (
            <Card title="Payments">
              {payments.length === 0 ? <p className="text-muted">No payments yet.</p> : null}
              <ul className="divide-y divide-line">
                {payments.map((p) => (
                  <li key={p.id} className="py-3">
                    <div className="flex flex-wrap items-center justify-between gap-3">
                      <div>
                        <p className="font-semibold">
                          {p.amount} · {p.method} <PaymentStatusBadge status={p.status} />
                        </p>
                        <p className="text-sm text-muted">
                          {p.when}
                          {p.reference ? ` · ref. ${p.reference}` : ""}
                          {p.refunded ? ` · ${p.refunded} refunded` : ""}
                          {p.status === "succeeded"
                            ? p.receiptSent
                              ? " · receipt e-mailed"
                              : " · no receipt sent"
                            : ""}
                        </p>
                        {p.problem && p.status !== "succeeded" ? (
                          <p className="mt-1 text-sm text-red-900">{p.problem}</p>
                        ) : null}
                      </div>
                      {p.status === "succeeded" ? (
                        <div className="flex gap-2">
                          <a
                            href={`/billing/payments/${p.id}/receipt.pdf`}
                            className={buttonClass("secondary", "px-3 py-1")}
                          >
                            Receipt PDF
                          </a>
                          <Form method="post">
                            <input type="hidden" name="intent" value="receipt" />
                            <input type="hidden" name="paymentId" value={p.id} />
                            <Button type="submit" variant="secondary" className="px-3 py-1" pending={busy("receipt")}>
                              E-mail receipt
                            </Button>
                          </Form>
                        </div>
                      ) : null}
                    </div>
                    {p.refundable > 0 ? (
                      <details className="mt-2">
                        <summary className="cursor-pointer text-sm font-semibold text-accent-700">
                          Refund (up to {p.refundableText})
                        </summary>
                        <Form method="post" className="mt-2 flex flex-wrap items-end gap-3">
                          <input type="hidden" name="intent" value="refund" />
                          <input type="hidden" name="paymentId" value={p.id} />
                          <div>
                            <label htmlFor={`refund-amount-${p.id}`} className="mb-1 block text-sm font-semibold">
                              Amount to refund ({invoice.currency})
                            </label>
                            <Input id={`refund-amount-${p.id}`} name="amount" inputMode="decimal" className="w-36" />
                          </div>
                          <div className="min-w-48 flex-1">
                            <label htmlFor={`refund-reason-${p.id}`} className="mb-1 block text-sm font-semibold">
                              Reason
                            </label>
                            <Input id={`refund-reason-${p.id}`} name="reason" />
                          </div>
                          <Button type="submit" variant="danger" pending={busy("refund")}>
                            Refund
                          </Button>
                        </Form>
                        {reply?.initialValue?.paymentId === p.id ? (
                          <ErrorList
                            errors={[...(err("refund", "amount") ?? []), ...(err("refund", "reason") ?? [])]}
                          />
                        ) : null}
                      </details>
                    ) : null}
                  </li>
                ))}
              </ul>
              {refunds.length ? (
                <>
                  <h3 className="mt-4 font-semibold">Refunds</h3>
                  <ul className="mt-1 text-sm">
                    {refunds.map((r) => (
                      <li key={r.id}>
                        {r.when}: {r.amount} — {r.reason}
                      </li>
                    ))}
                  </ul>
                </>
              ) : null}
            </Card>
          ) : null}
        </div>

        <div className="space-y-6">
          {isDraft ? (
            <>
              <Card title="Discount">
                <Form method="post" className="space-y-3">
                  <input type="hidden" name="intent" value="discount" />
                  <div>
                    <label htmlFor="discountKind" className="mb-1 block text-sm font-semibold">
                      Kind
                    </label>
                    <Select id="discountKind" name="discountKind" defaultValue={invoice.discountKind}>
                      <option value="none">No discount</option>
                      <option value="percent">Percentage of the subtotal</option>
                      <option value="amount">Fixed amount</option>
                    </Select>
                  </div>
                  <div>
                    <label htmlFor="discountValue" className="mb-1 block text-sm font-semibold">
                      Percentage or amount
                    </label>
                    <Input
                      id="discountValue"
                      name="discountValue"
                      inputMode="decimal"
                      defaultValue={invoice.discountValue}
                      aria-invalid={err("discount", "discountValue") ? true : undefined}
                    />
                    <ErrorList errors={err("discount", "discountValue")} />
                  </div>
                  <Button type="submit" variant="secondary" pending={busy("discount")}>
                    Apply discount
                  </Button>
                </Form>
              </Card>
              <Card title="Issue">
                <p className="mb-3 text-sm text-muted">
                  Issuing gives the invoice its number and fixes its lines and tax rate.
                </p>
                <div className="flex flex-wrap gap-2">
                  <Form method="post">
                    <input type="hidden" name="intent" value="issue" />
                    <Button type="submit" pending={busy("issue")}>
                      Issue invoice
                    </Button>
                  </Form>
                  <Form method="post">
                    <input type="hidden" name="intent" value="discard" />
                    <Button type="submit" variant="danger" pending={busy("discard")}>
                      Discard draft
                    </Button>
                  </Form>
                </div>
              </Card>
            </>
          ) : null}
          {payable ? (
            <>
              <Card title="Take a payment at the desk">
                <Form method="post" className="space-y-3" ref={payForm}>
                  <input type="hidden" name="intent" value="pay-desk" />
                  {err("pay-desk", "confirmRepeat") ? (
                    <Notice tone="warning" title="This looks like the same payment again">
                      <p id="repeat-warning">{err("pay-desk", "confirmRepeat")!.join(" ")}</p>
                      <label className="mt-2 flex items-center gap-2 font-semibold">
                        <input
                          type="checkbox"
                          name="confirmRepeat"
                          value="yes"
                          className="size-4"
                          aria-describedby="repeat-warning"
                        />{" "}
                        This is a second payment: record it too
                      </label>
                    </Notice>
                  ) : null}
                  <fieldset>
                    <legend className="mb-1 text-sm font-semibold">Method</legend>
                    <div className="flex gap-4">
                      <label className="flex items-center gap-2">
                        <input type="radio" name="method" value="card_desk" defaultChecked /> Card
                      </label>
                      <label className="flex items-center gap-2">
                        <input type="radio" name="method" value="cash" /> Cash
                      </label>
                    </div>
                    <ErrorList errors={err("pay-desk", "method")} />
                  </fieldset>
                  <div>
                    <label htmlFor="amount" className="mb-1 block text-sm font-semibold">
                      Amount ({invoice.currency})
                    </label>
                    <Input
                      id="amount"
                      name="amount"
                      inputMode="decimal"
                      defaultValue={invoice.dueDecimal}
                      aria-invalid={err("pay-desk", "amount") ? true : undefined}
                      aria-describedby={err("pay-desk", "amount") ? "amount-error" : undefined}
                    />
                    <ErrorList id="amount-error" errors={err("pay-desk", "amount")} />
                  </div>
                  <div>
                    <label htmlFor="reference" className="mb-1 block text-sm font-semibold">
                      Terminal or receipt reference (optional)
                    </label>
                    <Input id="reference" name="reference" />
                  </div>
                  <Button type="submit" pending={busy("pay-desk")}>
                    Record payment
                  </Button>
                </Form>
              </Card>
              <Card title="Pay online">
                <p className="mb-3 text-sm text-muted">
                  {patient.email
                    ? `E-mails the invoice to ${patient.email} with a payment link that works for 14 days.`
                    : "This patient has no e-mail address on file."}
                  {invoice.payLinkSentAt ? ` Last sent ${invoice.payLinkSentAt}.` : ""}
                </p>
                <Form method="post">
                  <input type="hidden" name="intent" value="email" />
                  <Button type="submit" variant="secondary" disabled={!patient.email} pending={busy("email")}>
                    E-mail invoice with payment link
                  </Button>
                </Form>
              </Card>
            </>
          ) : null}
          {!isDraft &&
          invoice.status !== "void" &&
          invoice.dueMinor > 0 &&
          payments.every((p) => p.status !== "succeeded") ? (
            <Card title="Void">
              <Form method="post" className="space-y-3">
                <input type="hidden" name="intent" value="void" />
                <div>
                  <label htmlFor="reason" className="mb-1 block text-sm font-semibold">
                    Reason
                  </label>
                  <Input id="reason" name="reason" aria-invalid={err("void", "reason") ? true : undefined} />
                  <ErrorList errors={err("void", "reason")} />
                </div>
                <Button type="submit" variant="danger" pending={busy("void")}>
                  Void invoice
                </Button>
              </Form>
            </Card>
          ) : null}
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
