import { z } from "zod";
import type { Route } from "./+types/appointments-item";
import { APPOINTMENT_STATUSES } from "~/lib/scheduling/status";
import { bookingErrorJson, errorJson, isoTime, readBody, zodFieldErrors } from "~/models/schedule/schedule-api.server";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { appointmentEvent, appointmentSiteTimeZone } from "~/models/schedule/appointment-view.server";
import { BookingError, changeStatus, moveAppointment, practiceSchedule } from "~/models/schedule/schedule.server";

/** GET /api/appointments/:appointmentId — one appointment. */
export async function loader({ request, params }: Route.LoaderArgs) {
  await requireRole(request, STAFF_ROLES);
  const { timeZone } = await practiceSchedule();
  const event = await appointmentEvent(params.appointmentId, timeZone);
  if (!event) return errorJson(404, "No such appointment.");
  return Response.json({ appointment: event });
}

/**
 * PATCH /api/appointments/:appointmentId — move or resize (`{ start, end?, providerId? }`) or
 * change status (`{ status, confirmOtherDay? }`; arrival, exam, completion and non-attendance on
 * another day than today are refused with 409 unless `confirmOtherDay` is true). Every change is re-validated; a refusal answers 4xx with the reason.
 */
export async function action({ request, params }: Route.ActionArgs) {
  if (request.method !== "PATCH" && request.method !== "POST") return errorJson(405, "Use PATCH.");
  const user = await requireRole(request, STAFF_ROLES);
  if (!z.uuid().safeParse(params.appointmentId).success) return errorJson(404, "No such appointment.");
  // Wall times without an offset are read at the appointment's site (its own zone).
  const timeZone = (await appointmentSiteTimeZone(params.appointmentId)) ?? (await practiceSchedule()).timeZone;
  const body = await readBody(request);
  const schema = z.union([
    z
      .object({
        status: z.enum(APPOINTMENT_STATUSES, { error: `status must be one of ${APPOINTMENT_STATUSES.join(", ")}.` }),
        confirmOtherDay: z.boolean({ error: "confirmOtherDay must be true or false." }).optional(),
      })
      .strict(),
    z
      .object({
        start: isoTime(timeZone, "start"),
        end: isoTime(timeZone, "end").optional(),
        providerId: z.uuid({ error: "Choose a provider." }).optional(),
      })
      .strict()
      .refine((v) => !v.end || v.end > v.start, { message: "The end must be after the start.", path: ["end"] }),
  ]);
  const parsed = schema.safeParse(body);
  if (!parsed.success)
    return errorJson(
      400,
      "Send either { status, confirmOtherDay? } or { start, end?, providerId? }.",
      zodFieldErrors(parsed.error),
    );
  try {
    let examId: string | undefined;
    if ("status" in parsed.data)
      ({ examId } = await changeStatus(user, params.appointmentId, parsed.data.status, request, {
        confirmOtherDay: parsed.data.confirmOtherDay,
      }));
    else await moveAppointment(user, params.appointmentId, parsed.data, request);
    const event = await appointmentEvent(params.appointmentId, timeZone);
    return Response.json({
      appointment: event,
      examUrl: examId && event ? `/patients/${event.extendedProps.patientId}/exams/${examId}` : undefined,
    });
  } catch (error) {
    if (error instanceof BookingError) return bookingErrorJson(error);
    throw error;
  }
}
