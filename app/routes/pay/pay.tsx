import { createColumnHelper } from "@tanstack/react-table";
import { data, Form, redirect, useNavigation } from "react-router";
import type { Route } from "./+types/pay";
import { invoiceForToken } from "~/models/billing/pay.server";
import { DataTable } from "~/components/data-table";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Notice } from "~/components/ui/notice";
import { InvoiceStatusBadge } from "~/components/billing/invoice-status";
import { latestOnlineAttempt, startCheckout } from "~/models/billing/checkout.server";
import { BillingError, invoiceLabel, practiceBilling } from "~/models/billing/invoices.server";
import { formatDate, formatMoney } from "~/lib/format";
import { audit } from "~/utils/audit.server";
import { getSessionUser } from "~/utils/session.server";

/**
 * Sent as plain HTML, without scripts: the Pay button is a form post, and while the payment is
 * being confirmed the page reloads itself (a refresh meta tag).
 */
export const handle = { hydrate: false };

/** Seconds between reloads while a payment made at the checkout waits for the provider's webhook. */
const CONFIRM_REFRESH_SECONDS = 2;
/** After this long without the provider's word the page stops reloading and says what to do. */
const CONFIRM_LIMIT_MS = 3 * 60_000;

/**
 * The patient's pay-by-link page: no sign-in; the signed, expiring token in the address is the
 * guard and reveals this one invoice only. The patient portal links here too.
 */
export async function loader({ request, params }: Route.LoaderArgs) {
  const { detail: d, expiresAt } = await invoiceForToken(params.token);
  const practice = await practiceBilling();
  const url = new URL(request.url);
  const attempt = await latestOnlineAttempt(d.invoice.id);
  // The patient came from the portal (signed in as this invoice's patient): offer the way back.
  const viewer = await getSessionUser(request);
  const fromPortal = viewer?.role === "patient" && viewer.patientId === d.patient.id;
  await audit({
    action: "billing.pay_link_opened",
    entityType: "invoice",
    entityId: d.invoice.id,
    patientId: d.patient.id,
    request,
  });
  const cur = d.invoice.currency;
  const checkout = url.searchParams.get("checkout");
  const waiting = checkout === "done" && d.invoice.status !== "paid" && attempt?.status === "pending";
  const stale = attempt !== null && Date.now() - attempt.updatedAt.getTime() >= CONFIRM_LIMIT_MS;
  return {
    practice: { name: practice.name, phone: practice.phone, email: practice.email },
    firstName: d.patient.firstName,
    invoice: {
      label: invoiceLabel(d.invoice.number),
      status: d.invoice.status,
      issuedAt: d.invoice.issuedAt
        ? formatDate(d.invoice.issuedAt, { timeZone: practice.timeZone, style: "long" })
        : "",
      total: formatMoney(d.invoice.totalMinor, cur),
      paid: formatMoney(d.invoice.paidMinor, cur),
      dueMinor: d.invoice.totalMinor - d.invoice.paidMinor,
      due: formatMoney(d.invoice.totalMinor - d.invoice.paidMinor, cur),
      tax: d.invoice.taxMinor ? formatMoney(d.invoice.taxMinor, cur) : null,
      discount: d.invoice.discountMinor ? formatMoney(-d.invoice.discountMinor, cur) : null,
    },
    lines: d.lines.map((l) => ({
      id: l.id,
      description: l.description,
      quantity: l.quantity,
      amount: formatMoney(l.grossMinor, cur),
    })),
    checkout,
    // Back from the checkout before the payment service's webhook has arrived: the page reloads
    // itself for a while, then stops and tells the patient not to pay twice.
    confirming: waiting && !stale,
    unconfirmed: waiting && stale,
    attempt: attempt ? { status: attempt.status, problem: attempt.problem } : null,
    linkExpires: formatDate(expiresAt, { timeZone: practice.timeZone, style: "long" }),
    pdfHref: `/pay/${params.token}/invoice.pdf`,
    fromPortal,
  };
}

export async function action({ request, params }: Route.ActionArgs) {
  const { detail } = await invoiceForToken(params.token);
  const form = await request.formData();
  if (form.get("intent") !== "pay") return data({ error: "Use the Pay button." }, { status: 400 });
  try {
    const url = await startCheckout(detail.invoice.id, `/pay/${params.token}`);
    return redirect(url);
  } catch (error) {
    if (error instanceof BillingError) return data({ error: error.message }, { status: error.status });
    throw error;
  }
}

type Line = Route.ComponentProps["loaderData"]["lines"][number];
const col = createColumnHelper<Line>();
const lineColumns = [
  col.accessor("description", { header: "Description" }),
  col.accessor("quantity", { header: "Qty", meta: { align: "right" } }),
  col.accessor("amount", { header: "Amount", meta: { align: "right" } }),
];

export default function PayPage({ loaderData: d, actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  const paid = d.invoice.status === "paid";
  const confirming = d.confirming;
  const declined = d.checkout === "cancelled" && d.attempt?.status === "pending" && d.attempt.problem;
  return (
    <main id="main" className="mx-auto max-w-2xl px-4 py-10 sm:px-6">
      <p className="text-sm font-semibold text-accent-800">{d.practice.name}</p>
      <h1 className="mt-1 flex flex-wrap items-center gap-3 text-2xl sm:text-3xl">
        Invoice {d.invoice.label} <InvoiceStatusBadge status={d.invoice.status} />
      </h1>
      <p className="mt-1 text-muted">
        For {d.firstName}, issued {d.invoice.issuedAt}.
      </p>
      <div className="mt-6 space-y-4">
        {actionData && "error" in actionData ? (
          <Notice tone="error" title="Payment not started">
            {actionData.error}
          </Notice>
        ) : null}
        {paid ? (
          <Notice tone="success" title="Paid — thank you">
            {d.checkout === "done"
              ? "Your payment has been received. A receipt is on its way by e-mail."
              : "This invoice has been paid in full."}
            {d.fromPortal ? (
              <>
                {" "}
                <a href="/portal/invoices" className="font-semibold underline underline-offset-4">
                  Back to your invoices in the portal
                </a>
              </>
            ) : null}
          </Notice>
        ) : null}
        {confirming ? (
          <Notice tone="info" title="Confirming your payment">
            The payment service is confirming your payment. This page updates by itself in a few seconds.
          </Notice>
        ) : null}
        {d.unconfirmed ? (
          <Notice tone="warning" title="Your payment is not confirmed yet">
            The payment service has not confirmed your payment after several minutes. Please do not pay again: if your
            card was charged, the invoice will show as paid once it is confirmed. Open this link again later, or call{" "}
            {d.practice.name} on {d.practice.phone}.
          </Notice>
        ) : null}
        {declined ? (
          <Notice tone="error" title="Your card was not charged">
            {d.attempt!.problem} The invoice is still open; you can try again with another card, or pay at the practice.
          </Notice>
        ) : d.checkout === "cancelled" && !paid ? (
          <Notice tone="warning" title="Payment not completed">
            Nothing was charged and the invoice is still open.
          </Notice>
        ) : null}
        {d.attempt?.status === "flagged" && !paid ? (
          <Notice tone="warning" title="Your payment is being checked">
            The payment service reported an amount that does not match this invoice, so it has not been counted yet. The
            practice will check it and contact you; please do not pay again meanwhile.
          </Notice>
        ) : null}
        {d.invoice.status === "void" ? (
          <Notice tone="warning" title="Cancelled">
            This invoice has been cancelled by the practice; there is nothing to pay.
          </Notice>
        ) : null}
      </div>
      <Card className="mt-6">
        <DataTable
          data={d.lines}
          columns={lineColumns}
          getRowId={(l) => l.id}
          caption="Invoice lines"
          empty="This invoice has no lines."
        />
        <dl className="mt-4 ml-auto grid max-w-xs grid-cols-2 gap-y-1 text-sm">
          {d.invoice.discount ? (
            <>
              <dt className="text-muted">Discount</dt>
              <dd className="text-right tabular-nums">{d.invoice.discount}</dd>
            </>
          ) : null}
          {d.invoice.tax ? (
            <>
              <dt className="text-muted">Tax</dt>
              <dd className="text-right tabular-nums">{d.invoice.tax}</dd>
            </>
          ) : null}
          <dt className="font-semibold">Total</dt>
          <dd className="text-right font-semibold tabular-nums">{d.invoice.total}</dd>
          <dt className="text-muted">Paid</dt>
          <dd className="text-right tabular-nums">{d.invoice.paid}</dd>
          <dt className="font-semibold">Amount due</dt>
          <dd className="text-right font-semibold tabular-nums" data-testid="amount-due">
            {d.invoice.due}
          </dd>
        </dl>
      </Card>
      {(d.invoice.status === "open" || d.invoice.status === "partially_paid") && !confirming && !d.unconfirmed ? (
        <Form method="post" className="mt-6">
          <input type="hidden" name="intent" value="pay" />
          <Button type="submit" pending={navigation.state !== "idle"} className="px-6 py-3 text-base">
            Pay {d.invoice.due} by card
          </Button>
          <p className="mt-2 text-sm text-muted">
            You will be taken to our card payment provider's secure page, then brought back here.
          </p>
        </Form>
      ) : null}
      {d.fromPortal ? (
        <p className="mt-8 text-sm">
          <a href="/portal" className="font-semibold text-accent-700 underline underline-offset-4">
            Back to the patient portal
          </a>
        </p>
      ) : null}
      <p className="mt-8 text-sm text-muted">
        <a href={d.pdfHref} className="font-semibold text-accent-700 underline underline-offset-4">
          Download the invoice (PDF)
        </a>{" "}
        · This link works until {d.linkExpires}. Questions:{" "}
        {[d.practice.phone, d.practice.email].filter(Boolean).join(" · ")}
      </p>
    </main>
  );
}

export const meta: Route.MetaFunction = ({ data }) => [
  { title: `Invoice ${data?.invoice.label ?? ""} · ${data?.practice.name ?? "Dioptra"}` },
  // Look again every few seconds until the payment is confirmed.
  ...(data?.confirming ? [{ httpEquiv: "refresh", content: String(CONFIRM_REFRESH_SECONDS) }] : []),
];

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
