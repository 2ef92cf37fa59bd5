import { and, asc, eq } from "drizzle-orm";
import { data } from "react-router";
import { z } from "zod";
import { appointmentChangeRequests, appointments, patients } from "~/db/schema";
import { formatLocal } from "~/lib/scheduling/time";
import { audit } from "~/utils/audit.server";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { db } from "~/utils/db.server";
import { redirectWithToast } from "~/utils/toast.server";

/** Patients' open requests (from the portal) to move a visit, oldest first, for the front desk's day list. */
export async function openMoveRequests(timeZone: string) {
  const rows = await db
    .select({
      id: appointmentChangeRequests.id,
      message: appointmentChangeRequests.message,
      createdAt: appointmentChangeRequests.createdAt,
      appointmentId: appointments.id,
      startsAt: appointments.startsAt,
      firstName: patients.firstName,
      lastName: patients.lastName,
    })
    .from(appointmentChangeRequests)
    .innerJoin(appointments, eq(appointments.id, appointmentChangeRequests.appointmentId))
    .innerJoin(patients, eq(patients.id, appointmentChangeRequests.patientId))
    .where(eq(appointmentChangeRequests.status, "open"))
    .orderBy(asc(appointmentChangeRequests.createdAt))
    .limit(50);
  return rows.map((r) => ({
    id: r.id,
    message: r.message,
    appointmentId: r.appointmentId,
    patientName: `${r.firstName} ${r.lastName}`,
    visitAt: formatLocal(r.startsAt, timeZone),
    askedAt: formatLocal(r.createdAt, timeZone),
  }));
}

const settleSchema = z.object({ intent: z.literal("settle-move-request"), requestId: z.uuid() });

/**
 * A patient's request (from the portal) to move one of their visits: updates the message of the
 * visit's open request, or opens one, with its audit row in the same transaction.
 */
export async function requestMove(input: {
  actorUserId: string;
  patientId: string;
  appointmentId: string;
  message: string;
  request?: Request;
}) {
  const { actorUserId, patientId, appointmentId, message, request } = input;
  const [open] = await db
    .select({ id: appointmentChangeRequests.id })
    .from(appointmentChangeRequests)
    .where(
      and(eq(appointmentChangeRequests.appointmentId, appointmentId), eq(appointmentChangeRequests.status, "open")),
    );
  await db.transaction(async (tx) => {
    if (open)
      await tx.update(appointmentChangeRequests).set({ message }).where(eq(appointmentChangeRequests.id, open.id));
    else await tx.insert(appointmentChangeRequests).values({ appointmentId, patientId, message });
    await audit(
      {
        action: "portal.move_requested",
        actorUserId,
        patientId,
        entityType: "appointment",
        entityId: appointmentId,
        detail: { message },
        request,
      },
      tx,
    );
  });
}

/** Marks a patient's move request as dealt with, stamping who and when. */
export async function settleMoveRequest(request: Request, form: FormData) {
  const user = await requireRole(request, STAFF_ROLES);
  const parsed = settleSchema.safeParse(Object.fromEntries(form));
  if (!parsed.success) throw data({ error: "That request could not be found." }, { status: 400 });
  const done = await db.transaction(async (tx) => {
    const [row] = await tx
      .update(appointmentChangeRequests)
      .set({ status: "done", handledById: user.id, handledAt: new Date() })
      .where(and(eq(appointmentChangeRequests.id, parsed.data.requestId), eq(appointmentChangeRequests.status, "open")))
      .returning({
        patientId: appointmentChangeRequests.patientId,
        appointmentId: appointmentChangeRequests.appointmentId,
      });
    if (row)
      await audit(
        {
          action: "appointment.move_request_settled",
          actorUserId: user.id,
          patientId: row.patientId,
          entityType: "appointment",
          entityId: row.appointmentId,
          request,
        },
        tx,
      );
    return row;
  });
  if (!done) throw data({ error: "That request has already been dealt with." }, { status: 409 });
  const url = new URL(request.url);
  return redirectWithToast(`${url.pathname}${url.search}`, { kind: "success", title: "Request marked as dealt with" });
}
