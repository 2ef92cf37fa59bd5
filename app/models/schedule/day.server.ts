import { data, redirect } from "react-router";
import { z } from "zod";
import { scheduleReferenceData } from "./schedule-data.server";
import { APPOINTMENT_STATUSES } from "~/lib/scheduling/status";
import { formatLocal, localDayRange, localParts } from "~/lib/scheduling/time";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { appointmentsBetween, BookingError, changeStatus, practiceSchedule } from "~/models/schedule/schedule.server";
import { siteChoice, zoneOfChoice } from "~/models/schedule/sites.server";

/** The day's appointments for the front desk (everyone) or one optometrist, at one site or all; `date`, `provider` and `site` in the query. */
export async function loadDayList(request: Request) {
  const user = await requireRole(request, STAFF_ROLES);
  const url = new URL(request.url);
  const practice = await practiceSchedule();
  const { providers, sites } = await scheduleReferenceData();
  const { site, setCookie } = await siteChoice(request, sites);
  // The day and its times are the chosen site's wall clock; every site together: the practice's.
  const timeZone = zoneOfChoice(site, sites, practice.timeZone);
  const today = localParts(new Date(), timeZone).date;
  const date = /^\d{4}-\d{2}-\d{2}$/.test(url.searchParams.get("date") ?? "") ? url.searchParams.get("date")! : today;
  const asked = url.searchParams.get("provider");
  const provider =
    asked === "all" || providers.some((p) => p.id === asked) ? asked! : user.role === "optometrist" ? user.id : "all";
  const { start, end } = localDayRange(date, timeZone);
  const rows = await appointmentsBetween(start, end, {
    providerId: provider === "all" ? undefined : provider,
    siteId: site === "all" ? undefined : site,
    includeCancelled: true,
  });
  return {
    user: { id: user.id, role: user.role },
    timeZone,
    date,
    today,
    provider,
    providers: providers.map(({ id, name }) => ({ id, name })),
    site,
    sites: sites.map(({ id, name }) => ({ id, name })),
    setCookie,
    checkedAt: formatLocal(new Date(), timeZone, { withDate: false }),
    appointments: rows.map((r) => ({
      id: r.id,
      time: `${formatLocal(r.start, timeZone, { withDate: false })}–${formatLocal(r.end, timeZone, { withDate: false })}`,
      status: r.status,
      patientId: r.patientId,
      patientName: r.patientName,
      typeName: r.typeName,
      providerName: r.providerName,
      providerId: r.providerId,
      place: sites.length > 1 ? [r.siteName, r.roomName].filter(Boolean).join(" · ") : (r.roomName ?? ""),
    })),
  };
}

const statusSchema = z.object({
  intent: z.literal("status"),
  appointmentId: z.uuid(),
  status: z.enum(APPOINTMENT_STATUSES),
  confirmOtherDay: z.literal("1").optional(),
});

/** Shared by the day list and the appointment page: change a status, open the exam when it starts. */
export async function statusAction(request: Request) {
  const user = await requireRole(request, STAFF_ROLES);
  const parsed = statusSchema.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success)
    return data({ ok: false, error: "Choose an appointment and a status.", needsConfirm: false }, { status: 400 });
  try {
    const { appointment, examId } = await changeStatus(user, parsed.data.appointmentId, parsed.data.status, request, {
      confirmOtherDay: parsed.data.confirmOtherDay === "1",
    });
    if (examId) throw redirect(`/patients/${appointment.patientId}/exams/${examId}`);
    return { ok: true, error: null, needsConfirm: false };
  } catch (error) {
    if (error instanceof BookingError)
      return data(
        { ok: false, error: error.message, needsConfirm: Boolean(error.fieldErrors.confirmOtherDay) },
        { status: error.status },
      );
    throw error;
  }
}
