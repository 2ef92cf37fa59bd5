import type { Route } from "./+types/order-pdf";
import { buildOrderPdf } from "~/models/orders/order-pdf.server";
import { ORDER_ROLES, orderDetail } from "~/models/orders/orders.server";
import { isUuid } from "~/models/patients/patient-schema";
import { audit } from "~/utils/audit.server";
import { requireRole } from "~/utils/auth.server";
import { notFound } from "~/utils/failure.server";

/** GET /orders/:orderId/order.pdf — the order form as the lab receives it. */
export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, ORDER_ROLES);
  if (!isUuid(params.orderId)) notFound("Not found.");
  const d = await orderDetail(params.orderId);
  if (!d) notFound("Not found.");
  const bytes = await buildOrderPdf(d);
  await audit({
    action: "order.form_printed",
    actorUserId: user.id,
    entityType: "optical_order",
    entityId: d.order.id,
    patientId: d.order.patientId,
    request,
  });
  return new Response(new Uint8Array(bytes), {
    headers: {
      "content-type": "application/pdf",
      "content-disposition": `inline; filename="order-${d.label}.pdf"`,
      "cache-control": "private, no-store",
    },
  });
}
