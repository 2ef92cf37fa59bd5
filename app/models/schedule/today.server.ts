import { formatLocal, localDayRange, localParts } from "~/lib/scheduling/time";
import type { SessionUser } from "~/utils/session.server";
import { appointmentsBetween, practiceSchedule } from "~/models/schedule/schedule.server";

/** Today's appointments for the staff home: an optometrist's own, the whole practice for others. */
export async function todaySummary(user: SessionUser) {
  const { timeZone } = await practiceSchedule();
  const date = localParts(new Date(), timeZone).date;
  const { start, end } = localDayRange(date, timeZone);
  const own = user.role === "optometrist";
  const rows = await appointmentsBetween(start, end, { providerId: own ? user.id : undefined });
  return {
    own,
    date,
    role: user.role,
    appointments: rows.map((r) => ({
      id: r.id,
      time: formatLocal(r.start, timeZone, { withDate: false }),
      patientName: r.patientName,
      typeName: r.typeName,
      providerName: r.providerName,
      status: r.status,
    })),
  };
}
