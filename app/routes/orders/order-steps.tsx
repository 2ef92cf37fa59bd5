/** The order page's next steps: the moves the order's state allows, and releasing a failed check. */
import { Form, useNavigation } from "react-router";
import type { Route } from "./+types/order";
import { ErrorList } from "~/components/forms";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input, Select, Textarea } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";
import { formatMoney } from "~/lib/format";
import type { OrderStateName } from "~/lib/orders/states";

type OrderData = Route.ComponentProps["loaderData"];
type Errors = Record<string, string[]>;

function usePending() {
  const navigation = useNavigation();
  return (intent: string) => navigation.state === "submitting" && navigation.formData?.get("intent") === intent;
}

function ReasonField({
  intent,
  label,
  errors,
  hint,
  required,
}: {
  intent: string;
  label: string;
  errors: Errors;
  hint?: string;
  required?: boolean;
}) {
  const id = `${intent}-reason`;
  const describedBy = [hint ? `${id}-hint` : "", errors.reason ? `${id}-error` : ""].filter(Boolean).join(" ");
  return (
    <div>
      <label htmlFor={id} className="mb-1 block text-sm font-semibold">
        {label}
        {required ? <span className="font-normal text-muted"> (required)</span> : null}
      </label>
      {hint ? (
        <p id={`${id}-hint`} className="mb-1 text-sm text-muted">
          {hint}
        </p>
      ) : null}
      <Textarea
        id={id}
        name="reason"
        rows={2}
        aria-required={required ? true : undefined}
        aria-invalid={errors.reason ? true : undefined}
        aria-describedby={describedBy || undefined}
      />
      <ErrorList id={`${id}-error`} errors={errors.reason} />
    </div>
  );
}

/**
 * Spectacles whose last check failed: an optometrist or the owner may release them with a reason
 * (the server checks the role and the reason again); anyone else is told what to do instead.
 */
export function ReleaseFailedCheck({ d, errors }: { d: OrderData; errors: Errors }) {
  const pending = usePending();
  if (!d.canOverride)
    return (
      <p className="text-sm">
        These spectacles failed the check: send them for a remake, or ask an optometrist or the practice owner to
        release them with a reason.
      </p>
    );
  return (
    <section aria-labelledby="release-heading" className="space-y-3 rounded-md border border-line p-3">
      <h3 id="release-heading" className="text-sm font-semibold">
        Release despite the failed check
      </h3>
      <Notice tone="warning" title="You take responsibility for this release">
        These spectacles are outside the {d.standard} tolerances shown in the report. Release them only if you judge
        them safe and suitable for this patient; you take professional responsibility for that decision under your local
        law and your regulator&apos;s rules. Otherwise send them for a remake.
      </Notice>
      <Form method="post" className="space-y-2" noValidate>
        <input type="hidden" name="intent" value="release" />
        <input type="hidden" name="expected" value="checked" />
        <ReasonField
          intent="release"
          label="Reason for releasing"
          hint="Kept in the order's history and the audit log with your name and the time."
          errors={errors}
          required
        />
        <Button type="submit" variant="secondary" pending={pending("release")}>
          Release and mark ready to collect
        </Button>
      </Form>
    </section>
  );
}

export function NextSteps({ d, errorsFor }: { d: OrderData; errorsFor: (intent: string) => Errors }) {
  const pending = usePending();
  const state = d.order.state as OrderStateName;
  const lastCheck = d.checks[0];
  const failed = d.order.kind === "spectacles" && state === "checked" && lastCheck && !lastCheck.pass;
  const balance = d.invoice ? d.invoice.totalMinor - d.invoice.paidMinor : 0;
  const move = (
    intent: string,
    text: string,
    extra?: React.ReactNode,
    variant: "primary" | "secondary" | "danger" = "primary",
  ) => (
    <Form method="post" className="space-y-2">
      <input type="hidden" name="intent" value={intent} />
      <input type="hidden" name="expected" value={state} />
      {extra}
      <Button type="submit" variant={variant} pending={pending(intent)}>
        {text}
      </Button>
    </Form>
  );
  const open = state !== "collected" && state !== "cancelled";
  return (
    <Card title="Next step">
      <div className="space-y-4">
        {state === "draft" || state === "remake"
          ? move("send", state === "remake" ? "Send the remake to the lab" : "Send to the lab")
          : null}
        {state === "sent_to_lab" ? move("received", "Mark received from the lab") : null}
        {failed ? <ReleaseFailedCheck d={d} errors={errorsFor("release")} /> : null}
        {(state === "checked" && !failed) || (state === "received" && d.order.kind === "contact_lenses")
          ? move("ready", "Mark ready to collect")
          : null}
        {state === "ready_to_collect"
          ? move(
              "collect",
              "Mark collected",
              d.invoice ? (
                <div className="space-y-2">
                  <p className="text-sm">
                    Balance on {d.invoice.label}:{" "}
                    <span className="font-semibold">{formatMoney(balance, d.currency)}</span>
                  </p>
                  {balance > 0 ? (
                    <>
                      <div>
                        <label htmlFor="collect-amount" className="mb-1 block text-sm font-semibold">
                          Take now ({d.currency})
                        </label>
                        <Input
                          id="collect-amount"
                          name="amount"
                          type="text"
                          inputMode="decimal"
                          defaultValue={(balance / 100).toFixed(2)}
                          aria-invalid={errorsFor("collect").amount ? true : undefined}
                          aria-describedby={errorsFor("collect").amount ? "collect-amount-error" : undefined}
                        />
                        <ErrorList id="collect-amount-error" errors={errorsFor("collect").amount} />
                      </div>
                      <div>
                        <label htmlFor="collect-method" className="mb-1 block text-sm font-semibold">
                          Paid by
                        </label>
                        <Select id="collect-method" name="method" defaultValue="card_desk">
                          <option value="card_desk">Card at the desk</option>
                          <option value="cash">Cash</option>
                        </Select>
                      </div>
                    </>
                  ) : null}
                </div>
              ) : null,
            )
          : null}
        {["received", "checked", "ready_to_collect"].includes(state)
          ? move(
              "remake",
              "Send for a remake",
              <ReasonField intent="remake" label="Reason for the remake" errors={errorsFor("remake")} />,
              "secondary",
            )
          : null}
        {open && state !== "ready_to_collect"
          ? move(
              "cancel",
              "Cancel the order",
              <ReasonField intent="cancel" label="Reason for cancelling" errors={errorsFor("cancel")} />,
              "danger",
            )
          : null}
        {!open ? <p className="text-sm text-muted">Nothing more to do.</p> : null}
      </div>
    </Card>
  );
}
