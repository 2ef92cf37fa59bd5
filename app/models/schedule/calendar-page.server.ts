/** What the schedule page shows besides the events: shaded working hours and each clinician's free times. */
import { freeGaps } from "~/lib/scheduling/free-gaps";
import { localDayRange, localParts, minutesToHhmm, weekdayOf } from "~/lib/scheduling/time";
import { appointmentsBetween } from "~/models/schedule/schedule.server";

type Hours = { providerId: string; weekday: number; startMinute: number; endMinute: number; siteId: string };
type Break = { providerId: string; weekday: number; startMinute: number; endMinute: number };
export type BusinessSpan = { daysOfWeek: number[]; startTime: string; endTime: string };

/** Working spans less breaks, as FullCalendar's business hours, of one provider ("all": everyone's) at a site ("all": any). */
export function businessSpans(hours: Hours[], breaks: Break[], provider: string, site: string): BusinessSpan[] {
  return hours
    .filter((h) => (provider === "all" || h.providerId === provider) && (site === "all" || h.siteId === site))
    .flatMap((h) => {
      const own = breaks
        .filter((b) => b.providerId === h.providerId && b.weekday === h.weekday)
        .sort((a, b) => a.startMinute - b.startMinute);
      const out: BusinessSpan[] = [];
      let from = h.startMinute;
      const push = (a: number, b: number) =>
        out.push({ daysOfWeek: [h.weekday % 7], startTime: minutesToHhmm(a), endTime: minutesToHhmm(b) });
      for (const b of own) {
        if (b.startMinute > from) push(from, b.startMinute);
        from = Math.max(from, b.endMinute);
      }
      if (from < h.endMinute) push(from, h.endMinute);
      return out;
    });
}

export type FreeTimes = { providerId: string; providerName: string; gaps: { start: string; end: string }[] }[];

/**
 * Each clinician's free stretches on `date` (wall times in `timeZone`), from now on when the day is
 * today: the keyboard's way to book, beside the calendar's grid.
 */
export async function freeTimes(
  date: string,
  timeZone: string,
  providers: { id: string; name: string }[],
  hours: Hours[],
  breaks: Break[],
  site: string,
): Promise<FreeTimes> {
  const weekday = weekdayOf(date);
  const { start, end } = localDayRange(date, timeZone);
  const booked = await appointmentsBetween(start, end, { siteId: site === "all" ? undefined : site });
  const now = localParts(new Date(), timeZone);
  const notBefore = now.date === date ? Math.ceil((now.minute + 1) / 15) * 15 : now.date > date ? 24 * 60 : 0;
  return providers.map((p) => {
    const working = hours.find(
      (h) => h.providerId === p.id && h.weekday === weekday && (site === "all" || h.siteId === site),
    );
    const taken = booked
      .filter((a) => a.providerId === p.id && a.status !== "no_show")
      .map((a) => ({
        startMinute: localParts(a.start, timeZone).date < date ? 0 : localParts(a.start, timeZone).minute,
        endMinute: localParts(a.end, timeZone).date > date ? 24 * 60 : localParts(a.end, timeZone).minute,
      }));
    const gaps = freeGaps(
      working,
      breaks.filter((b) => b.providerId === p.id && b.weekday === weekday),
      taken,
      { notBefore },
    );
    return {
      providerId: p.id,
      providerName: p.name,
      gaps: gaps.map((g) => ({
        start: `${date}T${minutesToHhmm(g.startMinute)}`,
        end: `${date}T${minutesToHhmm(g.endMinute)}`,
      })),
    };
  });
}
