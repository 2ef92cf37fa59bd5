import { data } from "react-router";
import type { Route } from "./+types/order-pdf";
import { buildOrderPdf } from "~/models/orders/order-pdf.server";
import { ORDER_ROLES, orderDetail } from "~/models/orders/orders.server";
import { isUuid } from "~/models/patients/patient-schema";
import { audit } from "~/utils/audit.server";
import { requireRole } from "~/utils/auth.server";

/** GET /orders/:orderId/order.pdf — the order form as the lab receives it. */
export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, ORDER_ROLES);
  if (!isUuid(params.orderId)) throw data({ error: "Not found." }, { status: 404 });
  const d = await orderDetail(params.orderId);
  if (!d) throw data({ error: "Not found." }, { status: 404 });
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
