/** The invoice page's side column: discount and issue while a draft, then desk and online payment, and voiding. */
import type { RefObject } from "react";
import { Form } from "react-router";
import type { Route } from "./+types/invoice";
import { ErrorList } from "~/components/forms";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input, Select } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";

export function InvoiceActions({
  d,
  isDraft,
  payable,
  err,
  busy,
  payForm,
}: {
  d: Route.ComponentProps["loaderData"];
  isDraft: boolean;
  payable: boolean;
  err: (intent: string, field: string) => string[] | undefined;
  busy: (intent: string) => boolean;
  payForm: RefObject<HTMLFormElement | null>;
}) {
  const { invoice, patient, payments } = d;
  return (
    <>
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
    </>
  );
}
