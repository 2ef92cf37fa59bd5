import { dateTimeFormat } from "~/lib/format/intl";
import type { Route } from "./+types/orders";
import { ordersOf, requirePortalPatient } from "~/models/portal/portal.server";
import { PageHeader } from "~/components/page-header";
import { Card } from "~/components/ui/card";
import { StatusBadge } from "~/components/ui/notice";
import { orderLabel, PATIENT_STATE_LABEL } from "~/lib/orders/states";
import { audit } from "~/utils/audit.server";

/** Sent as plain HTML, without scripts: the page only shows the patient's orders. */
export const handle = { hydrate: false };

/** The patient's own spectacle and contact-lens orders and where each stands. */
export async function loader({ request }: Route.LoaderArgs) {
  const { user, patientId } = await requirePortalPatient(request);
  const rows = await ordersOf(patientId);
  await audit({
    action: "portal.orders_read",
    actorUserId: user.id,
    patientId,
    entityType: "patient",
    entityId: patientId,
    request,
  });
  return {
    orders: rows.map((o) => ({
      ...o,
      label: orderLabel(o.number),
      createdAt: o.createdAt.toISOString(),
      stateChangedAt: o.stateChangedAt.toISOString(),
    })),
  };
}

export default function PortalOrders({ loaderData }: Route.ComponentProps) {
  const date = (iso: string) => dateTimeFormat("en-GB", { dateStyle: "medium" }).format(new Date(iso));
  return (
    <div className="mx-auto max-w-2xl space-y-6">
      <PageHeader
        title="Glasses and contact lenses"
        description="Your orders with the practice and where each one is."
      />
      {loaderData.orders.length === 0 ? <p className="text-muted">You have no orders.</p> : null}
      <ul className="space-y-4">
        {loaderData.orders.map((o) => (
          <li key={o.id}>
            <Card
              title={`${o.kind === "spectacles" ? "Spectacles" : "Contact lenses"} — ${o.label}`}
              actions={
                <StatusBadge
                  tone={
                    o.state === "ready_to_collect" || o.state === "collected"
                      ? "success"
                      : o.state === "cancelled"
                        ? "error"
                        : "info"
                  }
                >
                  {PATIENT_STATE_LABEL[o.state]}
                </StatusBadge>
              }
            >
              <dl className="grid grid-cols-[8rem_1fr] gap-y-1 text-sm">
                <dt className="text-muted">Ordered</dt>
                <dd>{date(o.createdAt)}</dd>
                {o.frameLabel ? (
                  <>
                    <dt className="text-muted">Frame</dt>
                    <dd>{o.frameLabel}</dd>
                  </>
                ) : null}
                <dt className="text-muted">Since</dt>
                <dd>{date(o.stateChangedAt)}</dd>
              </dl>
              {o.state === "ready_to_collect" ? (
                <p className="mt-3 text-sm font-semibold">Ready for you to collect from the practice.</p>
              ) : null}
            </Card>
          </li>
        ))}
      </ul>
    </div>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Glasses and contact lenses · Dioptra" }];
