/** The invoice page's larger cards: its lines with totals, and its payments and refunds. */
import { createColumnHelper } from "@tanstack/react-table";
import { Form } from "react-router";
import type { Route } from "./+types/invoice";
import { PaymentStatusBadge } from "~/components/billing/invoice-status";
import { DataTable } from "~/components/data-table";
import { ErrorList } from "~/components/forms";
import { Button, buttonClass } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input, Select } from "~/components/ui/input";

type Parts = {
  d: Route.ComponentProps["loaderData"];
  isDraft: boolean;
  err: (intent: string, field: string) => string[] | undefined;
  /** The payment the last refund form was sent for. */
  refundFor?: unknown;
  busy: (intent: string) => boolean;
};

type Line = Parts["d"]["lines"][number];
const col = createColumnHelper<Line>();
const lineColumns = [
  col.accessor("code", { header: "Code", meta: { className: "font-mono" } }),
  col.accessor("description", { header: "Description" }),
  col.accessor("quantity", { header: "Qty", meta: { align: "right" } }),
  col.accessor("unit", { header: "Unit price", meta: { align: "right" } }),
  col.accessor("tax", { header: "Tax", meta: { align: "right" } }),
  col.accessor("gross", { header: "Amount", meta: { align: "right" } }),
];
const removeColumn = col.display({
  id: "remove",
  header: () => <span className="sr-only">Remove</span>,
  cell: ({ row: { original: l } }) => (
    <Form method="post">
      <input type="hidden" name="intent" value="remove-line" />
      <input type="hidden" name="lineId" value={l.id} />
      <Button type="submit" variant="ghost" className="px-2 py-1 text-red-800">
        Remove<span className="sr-only"> {l.description}</span>
      </Button>
    </Form>
  ),
});

export function InvoiceLinesCard({ d, isDraft, err, busy }: Parts) {
  const { invoice, lines, fees } = d;
  return (
    <Card title="Lines">
      <DataTable
        data={lines}
        columns={isDraft ? [...lineColumns, removeColumn] : lineColumns}
        getRowId={(l) => l.id}
        caption="Invoice lines"
        empty="No lines yet: add one from the fee schedule."
      />
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
  );
}

export function InvoicePaymentsCard({ d, err, busy, refundFor }: Parts) {
  const { invoice, payments, refunds } = d;
  return (
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
                  {p.status === "succeeded" ? (p.receiptSent ? " · receipt e-mailed" : " · no receipt sent") : ""}
                </p>
                {p.problem && p.status !== "succeeded" ? (
                  <p className="mt-1 text-sm text-red-900">{p.problem}</p>
                ) : null}
              </div>
              {p.status === "succeeded" ? (
                <div className="flex gap-2">
                  <a href={`/billing/payments/${p.id}/receipt.pdf`} className={buttonClass("secondary", "px-3 py-1")}>
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
                {refundFor === p.id ? (
                  <ErrorList errors={[...(err("refund", "amount") ?? []), ...(err("refund", "reason") ?? [])]} />
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
  );
}
