import { and, eq } from "drizzle-orm";
import { providerBreaks, rooms, siteOpeningHours, sites, users, workingHours } from "~/db/schema";
import { fitsOpeningHours, WEEKDAY_NAMES } from "~/lib/scheduling/hours";
import { hhmmToMinutes, minutesToHhmm } from "~/lib/scheduling/time";
import { db } from "~/utils/db.server";
import { bookableProviders, practiceSchedule } from "~/models/schedule/schedule.server";
import { activeRooms, activeSites } from "~/models/schedule/sites.server";
import { auditedWrite, type Actor } from "./audited.server";

/** One weekday of the working-hours form as typed: times as HH:MM, empty when not given. */
export type DayEntry = {
  weekday: number;
  start: string;
  end: string;
  breakStart: string;
  breakEnd: string;
  breakLabel: string;
  siteId: string;
  roomId: string;
};
export type WorkingDay = {
  weekday: number;
  startMinute: number;
  endMinute: number;
  siteId: string;
  roomId: string | null;
};
export type BreakDay = { weekday: number; startMinute: number; endMinute: number; label: string; siteId: string };

/**
 * The bookable providers, the one asked for (else the first) with their week of working hours and
 * breaks, the practice's time zone, and the open sites and rooms a day can be placed at.
 */
export async function workingHoursPage(asked: string | null) {
  const providers = await bookableProviders();
  const provider = providers.find((p) => p.id === asked) ?? providers[0] ?? null;
  const { timeZone } = await practiceSchedule();
  const [siteList, roomList] = await Promise.all([activeSites(), activeRooms()]);
  const places = { sites: siteList.map(({ id, name }) => ({ id, name })), rooms: roomList };
  if (!provider) return { providers: [], provider: null, days: [], timeZone, places };
  const hours = await db.select().from(workingHours).where(eq(workingHours.providerId, provider.id));
  const breaks = await db.select().from(providerBreaks).where(eq(providerBreaks.providerId, provider.id));
  const days = WEEKDAY_NAMES.map((name, i) => {
    const weekday = i + 1;
    const h = hours.find((x) => x.weekday === weekday);
    const b = breaks.find((x) => x.weekday === weekday);
    return {
      weekday,
      name,
      start: h ? minutesToHhmm(h.startMinute) : "",
      end: h ? minutesToHhmm(h.endMinute) : "",
      breakStart: b ? minutesToHhmm(b.startMinute) : "",
      breakEnd: b ? minutesToHhmm(b.endMinute) : "",
      breakLabel: b?.label ?? "Lunch",
      siteId: h?.siteId ?? siteList[0]?.id ?? "",
      roomId: h?.roomId ?? "",
    };
  });
  return {
    providers: providers.map(({ id, name }) => ({ id, name })),
    provider: { id: provider.id, name: provider.name },
    days,
    timeZone,
    places,
  };
}

/** An active user whose hours can be set; undefined when there is none with this id. */
export async function activeProvider(id: string) {
  const [provider] = await db
    .select({ id: users.id, name: users.name })
    .from(users)
    .where(and(eq(users.id, id), eq(users.active, true)));
  return provider;
}

/**
 * Checks a week of working hours: each day's times, an open site (the default when none is
 * chosen) and a room of that site, inside the site's opening hours, and a break inside the day.
 * Answers the errors keyed as the form names its rows, and the days and breaks to save.
 */
export async function checkWorkingWeek(entries: DayEntry[]) {
  const errors: Record<string, string[]> = {};
  const hours: WorkingDay[] = [];
  const breaks: BreakDay[] = [];
  const allSites = await db.select().from(sites).where(eq(sites.active, true));
  const allRooms = await db.select().from(rooms).where(eq(rooms.active, true));
  const opening = await db.select().from(siteOpeningHours);
  const defaultSiteId = allSites.find((x) => x.isDefault)?.id ?? allSites[0]?.id ?? "";
  for (const { weekday, start, end, breakStart: bs, breakEnd: be, breakLabel, ...place } of entries) {
    const label = breakLabel.slice(0, 40) || "Break";
    if (!start && !end) {
      if (bs || be) errors[`break-${weekday}`] = ["A break needs working hours on that day."];
      continue;
    }
    const s = hhmmToMinutes(start);
    const e = hhmmToMinutes(end);
    if (s === null || e === null) {
      errors[`hours-${weekday}`] = ["Give both times as HH:MM, or leave both empty for a day off."];
      continue;
    }
    if (e <= s) {
      errors[`hours-${weekday}`] = ["The day must end after it starts."];
      continue;
    }
    // Where the provider works that day: an open site, and a room of that site (or none).
    const siteId = place.siteId || defaultSiteId;
    const site = allSites.find((x) => x.id === siteId);
    if (!site) {
      errors[`hours-${weekday}`] = ["Choose one of the practice's open sites."];
      continue;
    }
    const roomId = place.roomId || null;
    if (roomId && !allRooms.some((r) => r.id === roomId && r.siteId === site.id)) {
      errors[`hours-${weekday}`] = [`That room is not at ${site.name}; choose one of its rooms or none.`];
      continue;
    }
    const fits = fitsOpeningHours(
      { weekday, startMinute: s, endMinute: e },
      opening.filter((o) => o.siteId === site.id),
      site.name,
    );
    if (!fits.ok) {
      errors[`hours-${weekday}`] = [fits.reason];
      continue;
    }
    hours.push({ weekday, startMinute: s, endMinute: e, siteId: site.id, roomId });
    if (bs || be) {
      const b1 = hhmmToMinutes(bs);
      const b2 = hhmmToMinutes(be);
      if (b1 === null || b2 === null || b2 <= b1)
        errors[`break-${weekday}`] = ["Give the break's start and end as HH:MM, end after start."];
      else if (b1 < s || b2 > e) errors[`break-${weekday}`] = ["The break must lie inside the working hours."];
      else breaks.push({ weekday, startMinute: b1, endMinute: b2, label, siteId: site.id });
    }
  }
  return { errors, hours, breaks };
}

/** Replaces a provider's week of working hours and breaks, audited in the same transaction. */
export async function saveWorkingWeek(providerId: string, hours: WorkingDay[], breaks: BreakDay[], actor: Actor) {
  await auditedWrite(
    { action: "schedule.hours_changed", entityType: "user", entityId: providerId, detail: { hours, breaks } },
    actor,
    async (tx) => {
      await tx.delete(workingHours).where(eq(workingHours.providerId, providerId));
      await tx.delete(providerBreaks).where(eq(providerBreaks.providerId, providerId));
      if (hours.length) await tx.insert(workingHours).values(hours.map((h) => ({ ...h, providerId })));
      if (breaks.length) await tx.insert(providerBreaks).values(breaks.map((b) => ({ ...b, providerId })));
      return { id: providerId };
    },
  );
}
