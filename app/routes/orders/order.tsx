import { parseWithZod } from "@conform-to/zod/v4";
import { data, Form, Link, useNavigation } from "react-router";
import type { Route } from "./+types/order";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { PageHeader } from "~/components/page-header";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Notice, StatusBadge } from "~/components/ui/notice";
import { formatMoney } from "~/lib/format";
import { parseMoney } from "~/lib/money";
import { STATE_LABEL, type OrderStateName } from "~/lib/orders/states";
import {
  cancelOrder,
  collectOrder,
  markReady,
  markReceived,
  markRemake,
  ORDER_ROLES,
  orderDetail,
  OrderError,
  orderInvoice,
  OVERRIDE_ROLES,
  practiceOrderSettings,
  raiseOrderInvoice,
  recordCheck,
  releaseFailedCheck,
  RELEASE_ROLE_MESSAGE,
  sendToLab,
} from "~/models/orders/orders.server";
import { invoiceLabel } from "~/models/billing/invoices.server";
import { formatDate } from "~/lib/format";
import { isUuid } from "~/models/patients/patient-schema";
import { requireRole } from "~/utils/auth.server";
import { notFound } from "~/utils/failure.server";
import { redirectWithToast } from "~/utils/toast.server";
import { checkSchema, moveSchema } from "~/models/orders/order-schema";
import { CheckReport, EyeReadingFields, OrderHistory, OrderInvoice, OrderSummary, tone } from "./order-parts";
import { NextSteps } from "./order-steps";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, ORDER_ROLES);
  if (!isUuid(params.orderId)) notFound("There is no such order.");
  const d = await orderDetail(params.orderId);
  if (!d) notFound("There is no such order.");
  const settings = await practiceOrderSettings();
  const inv = await orderInvoice(d.order.invoiceId);
  return {
    role: user.role,
    canOverride: (OVERRIDE_ROLES as readonly string[]).includes(user.role),
    standard: settings.rules.dispensingStandard,
    currency: settings.currency,
    timeZone: settings.timeZone,
    label: d.label,
    order: {
      ...d.order,
      createdAt: d.order.createdAt.toISOString(),
      stateChangedAt: d.order.stateChangedAt.toISOString(),
    },
    patient: d.patient,
    lab: { name: d.lab.name, email: d.lab.email },
    rx: {
      issuedAt: d.rx.issuedAt.toISOString(),
      expiresOn: d.rx.expiresOn,
      lensName: d.rx.lensName,
      eyes: [d.rx.right, d.rx.left].filter((e) => e !== null),
    },
    events: d.events.map((e) => ({ ...e, at: e.at.toISOString() })),
    checks: d.checks.map((c) => ({ ...c, at: c.at.toISOString() })),
    messages: d.messages.map((m) => ({
      id: m.id,
      kind: m.kind,
      status: m.status,
      recipient: m.recipient,
      skippedReason: m.skippedReason,
      lastError: m.lastError,
      sentAt: m.sentAt?.toISOString() ?? null,
    })),
    invoice: inv
      ? {
          id: inv.id,
          label: invoiceLabel(inv.number),
          status: inv.status,
          totalMinor: inv.totalMinor,
          paidMinor: inv.paidMinor,
        }
      : null,
  };
}

type ActionResult = { intent: string; message?: string; fieldErrors?: Record<string, string[]> };

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requireRole(request, ORDER_ROLES);
  if (!isUuid(params.orderId)) notFound("There is no such order.");
  const id = params.orderId;
  const formData = await request.formData();
  const intent = String(formData.get("intent") ?? "");
  const fail = (status: number, r: Omit<ActionResult, "intent">) => data<ActionResult>({ intent, ...r }, { status });
  try {
    if (intent === "check") {
      const submission = parseWithZod(formData, { schema: checkSchema });
      if (submission.status !== "success")
        return fail(400, {
          fieldErrors: (submission.reply().error ?? {}) as Record<string, string[]>,
          message: "Some readings need correcting.",
        });
      const report = await recordCheck(
        user,
        id,
        { right: submission.value.right, left: submission.value.left },
        request,
      );
      return redirectWithToast(
        `/orders/${id}`,
        report.pass
          ? { kind: "success", title: `Passed the check (${report.standard})` }
          : {
              kind: "warning",
              title: `Failed the check (${report.standard})`,
              description:
                "See the report. Send for a remake, or an optometrist or the owner may release it with a reason.",
            },
      );
    }
    // Releasing a failed check is refused by role before anything else is read.
    if (intent === "release" && !(OVERRIDE_ROLES as readonly string[]).includes(user.role))
      return fail(403, { message: RELEASE_ROLE_MESSAGE });
    const submission = parseWithZod(formData, { schema: moveSchema });
    if (submission.status !== "success")
      return fail(400, { fieldErrors: (submission.reply().error ?? {}) as Record<string, string[]> });
    const v = submission.value;
    switch (v.intent) {
      case "send":
        await sendToLab(user, id, v.expected, request);
        return redirectWithToast(`/orders/${id}`, {
          kind: "success",
          title: "Sent to the lab",
          description: "The order form is on its way by e-mail.",
        });
      case "received":
        await markReceived(user, id, request);
        return redirectWithToast(`/orders/${id}`, { kind: "success", title: "Marked received from the lab" });
      case "ready":
        await markReady(user, id, v.expected, request);
        return redirectWithToast(`/orders/${id}`, {
          kind: "success",
          title: "Ready to collect",
          description: "The patient is told by e-mail if they accept e-mails.",
        });
      case "release":
        await releaseFailedCheck(user, id, v.reason, request);
        return redirectWithToast(`/orders/${id}`, {
          kind: "warning",
          title: "Released despite the failed check: ready to collect",
          description: "Your reason is in the order's history. The patient is told by e-mail if they accept e-mails.",
        });
      case "remake":
        await markRemake(user, id, v.expected, v.reason, request);
        return redirectWithToast(`/orders/${id}`, { kind: "success", title: "Marked for a remake" });
      case "cancel": {
        const r = await cancelOrder(user, id, v.expected, v.reason, request);
        return redirectWithToast(`/orders/${id}`, {
          kind: r.invoiceNote ? "warning" : "success",
          title: "Order cancelled",
          description: r.invoiceNote ?? "Any frame went back into stock.",
        });
      }
      case "collect": {
        const d = await orderDetail(id);
        const currency = (await practiceOrderSettings()).currency;
        let payment = null;
        if (v.amount) {
          const amountMinor = parseMoney(v.amount, currency);
          if (amountMinor === null || amountMinor <= 0)
            return fail(400, {
              fieldErrors: { amount: ["Give an amount such as 45.00, or leave it empty when nothing is due."] },
            });
          payment = { method: v.method, amountMinor, reference: v.reference };
        }
        if (!d) notFound("There is no such order.");
        await collectOrder(user, id, payment, request);
        return redirectWithToast(`/orders/${id}`, {
          kind: "success",
          title: "Collected",
          description: payment ? `${formatMoney(payment.amountMinor, currency)} taken.` : undefined,
        });
      }
      case "raise-invoice": {
        const invoiceId = await raiseOrderInvoice(user, id, request);
        return redirectWithToast(`/billing/invoices/${invoiceId}`, { kind: "success", title: "Invoice raised" });
      }
    }
  } catch (error) {
    if (error instanceof OrderError)
      return fail(
        error.status,
        error.field
          ? { fieldErrors: { [error.field]: [error.message] }, message: error.message }
          : { message: error.message },
      );
    throw error;
  }
}

export default function OrderPage({ loaderData: d, actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  const result = actionData as ActionResult | undefined;
  const errorsFor = (intent: string) => (result?.intent === intent ? (result.fieldErrors ?? {}) : {});
  const state = d.order.state as OrderStateName;
  const pending = (intent: string) =>
    navigation.state === "submitting" && navigation.formData?.get("intent") === intent;
  const lastCheck = d.checks[0];
  return (
    <>
      <PageHeader
        title={`${d.order.kind === "spectacles" ? "Spectacle order" : "Contact-lens order"} ${d.label}`}
        description={
          <>
            For{" "}
            <Link
              to={`/patients/${d.patient.id}`}
              className="font-semibold text-accent-700 underline underline-offset-4"
            >
              {d.patient.firstName} {d.patient.lastName}
            </Link>{" "}
            · lab {d.lab.name} · <StatusBadge tone={tone(state)}>{STATE_LABEL[state]}</StatusBadge>
          </>
        }
        actions={
          <a
            href={`/orders/${d.order.id}/order.pdf`}
            className="rounded-md border border-line bg-white px-4 py-2 text-sm font-semibold"
          >
            Order form (PDF)
          </a>
        }
      />
      {result?.message && !result.fieldErrors ? (
        <div className="mb-6">
          <Notice tone="error" title="Not done">
            {result.message}
          </Notice>
        </div>
      ) : null}
      <div className="grid gap-6 lg:grid-cols-[1fr_22rem]">
        <div className="space-y-6">
          <OrderSummary d={d} />
          {d.order.kind === "spectacles" && state === "received" ? (
            <Card title={`Lensmeter check (${d.standard})`}>
              <p className="mb-4 text-sm text-muted">
                Type what the lensmeter reads. The practice's dispensing standard decides each element; the optician
                checking the spectacles has the last word.
              </p>
              {result?.intent === "check" && result.message ? (
                <div className="mb-4">
                  <Notice tone="error" title="Not checked">
                    {result.message}
                  </Notice>
                </div>
              ) : null}
              <Form method="post" className="space-y-6">
                <input type="hidden" name="intent" value="check" />
                <input type="hidden" name="expected" value="received" />
                <EyeReadingFields side="right" errors={errorsFor("check")} />
                <EyeReadingFields side="left" errors={errorsFor("check")} />
                <Button type="submit" pending={pending("check")}>
                  Run the check
                </Button>
              </Form>
            </Card>
          ) : null}
          {lastCheck ? (
            <Card title={`Last check: ${lastCheck.pass ? "passed" : "failed"} (${lastCheck.standard})`}>
              <p className="mb-3 text-sm text-muted">
                By {lastCheck.by ?? "—"}, {formatDate(lastCheck.at.slice(0, 10))}.
              </p>
              <CheckReport report={lastCheck.report} />
            </Card>
          ) : null}
          <OrderHistory d={d} />
        </div>
        <div className="space-y-6">
          <NextSteps d={d} errorsFor={errorsFor} />
          <OrderInvoice d={d} pending={pending("raise-invoice")} />
        </div>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = ({ data }) => [{ title: `${data?.label ?? "Order"} · Dioptra` }];

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
