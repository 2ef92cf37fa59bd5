import { dateTimeFormat } from "~/lib/format/intl";
import { redirect } from "react-router";
import { Form, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/invoices";
import { invoicesOf, ownInvoice, portalSettings, requirePortalPatient } from "~/models/portal/portal.server";
import { PageHeader } from "~/components/page-header";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Notice, StatusBadge } from "~/components/ui/notice";
import { formatMoney } from "~/lib/format";
import { signPayLink } from "~/models/billing/checkout.server";
import { invoiceLabel } from "~/models/billing/invoices.server";
import { audit } from "~/utils/audit.server";

const STATUS = {
  open: "Awaiting payment",
  partially_paid: "Part paid",
  paid: "Paid",
  void: "Cancelled",
  draft: "Draft",
} as const;
const METHOD = { cash: "Cash", card_desk: "Card at the desk", card_online: "Card online" } as const;

/** Sent as plain HTML, without scripts: "Pay now" is a post that leads to the pay page. */
export const handle = { hydrate: false };

export async function loader({ request }: Route.LoaderArgs) {
  const { user, patientId } = await requirePortalPatient(request);
  const [list, settings] = await Promise.all([invoicesOf(patientId), portalSettings()]);
  await audit({
    action: "portal.invoices_read",
    actorUserId: user.id,
    patientId,
    entityType: "patient",
    entityId: patientId,
    request,
  });
  // The practice's own numbers ("INV-000002"), as on the invoice PDF and the front desk's screens.
  return { invoices: list.map((inv) => ({ ...inv, label: invoiceLabel(inv.number) })), timeZone: settings.timeZone };
}

/** "Pay now" takes the patient into the same signed pay-by-link flow the practice e-mails. */
export async function action({ request }: Route.ActionArgs) {
  const { patientId } = await requirePortalPatient(request);
  const parsed = z.object({ invoiceId: z.uuid() }).safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success) return { error: "Choose an invoice to pay." };
  const inv = await ownInvoice(patientId, parsed.data.invoiceId);
  if (inv.status !== "open" && inv.status !== "partially_paid")
    return { error: "That invoice has nothing left to pay." };
  return redirect(`/pay/${signPayLink(inv.id)}`);
}

export default function PortalInvoices({ loaderData, actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  const date = (iso: string | null) =>
    iso ? dateTimeFormat("en-GB", { dateStyle: "medium", timeZone: loaderData.timeZone }).format(new Date(iso)) : "—";
  return (
    <div className="mx-auto max-w-2xl space-y-6">
      <PageHeader title="Invoices and payments" />
      {actionData?.error ? (
        <Notice tone="error" title="Not done">
          {actionData.error}
        </Notice>
      ) : null}
      {loaderData.invoices.length === 0 ? <p className="text-muted">You have no invoices.</p> : null}
      <ul className="space-y-4">
        {loaderData.invoices.map((inv) => {
          const due = inv.totalMinor - inv.paidMinor;
          return (
            <li key={inv.id}>
              <Card
                title={`Invoice ${inv.label}`}
                actions={
                  <StatusBadge tone={inv.status === "paid" ? "success" : inv.status === "void" ? "error" : "warning"}>
                    {STATUS[inv.status]}
                  </StatusBadge>
                }
              >
                <dl className="grid grid-cols-[8rem_1fr] gap-y-1 text-sm">
                  <dt className="text-muted">Issued</dt>
                  <dd>{date(inv.issuedAt)}</dd>
                  <dt className="text-muted">Total</dt>
                  <dd className="font-semibold">{formatMoney(inv.totalMinor, inv.currency)}</dd>
                  {inv.status !== "void" ? (
                    <>
                      <dt className="text-muted">Still to pay</dt>
                      <dd className="font-semibold">{formatMoney(Math.max(0, due), inv.currency)}</dd>
                    </>
                  ) : null}
                </dl>
                <div className="mt-4 flex flex-wrap gap-3">
                  {inv.status === "open" || inv.status === "partially_paid" ? (
                    <Form method="post">
                      <input type="hidden" name="invoiceId" value={inv.id} />
                      <Button type="submit" pending={navigation.formData?.get("invoiceId") === inv.id}>
                        Pay {formatMoney(due, inv.currency)} now
                      </Button>
                    </Form>
                  ) : null}
                  <a
                    href={`/portal/invoices/${inv.id}/invoice.pdf`}
                    className="self-center font-semibold text-accent-700 underline underline-offset-4"
                  >
                    Invoice (PDF)
                  </a>
                </div>
                {inv.payments.length ? (
                  <div className="mt-4">
                    <h3 className="text-sm font-semibold">Payments</h3>
                    <ul className="mt-1 space-y-1 text-sm">
                      {inv.payments.map((p) => (
                        <li key={p.id} className="flex flex-wrap justify-between gap-2">
                          <span>
                            {date(p.receivedAt)} · {METHOD[p.method]} · {formatMoney(p.amountMinor, inv.currency)}
                          </span>
                          <a
                            href={`/portal/payments/${p.id}/receipt.pdf`}
                            className="font-semibold text-accent-700 underline underline-offset-4"
                          >
                            Receipt (PDF)
                          </a>
                        </li>
                      ))}
                    </ul>
                  </div>
                ) : null}
              </Card>
            </li>
          );
        })}
      </ul>
    </div>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Invoices · Dioptra" }];
