import { and, eq } from "drizzle-orm";
import { createColumnHelper } from "@tanstack/react-table";
import { data, Form, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/hours";
import { ErrorList } from "~/components/forms";
import { DataTable } from "~/components/data-table";
import { refusalNotice, SettingsPage, SettingsSection, TimeInput } from "~/components/settings-page";
import { Button } from "~/components/ui/button";
import { Input, Select } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";
import {
  providerBreaks,
  rooms as roomsTable,
  siteOpeningHours,
  sites as sitesTable,
  users,
  workingHours,
} from "~/db/schema";
import { fitsOpeningHours, WEEKDAY_NAMES } from "~/lib/scheduling/hours";
import { hhmmToMinutes, minutesToHhmm } from "~/lib/scheduling/time";
import { audit } from "~/utils/audit.server";
import { requireRole } from "~/utils/auth.server";
import { db } from "~/utils/db.server";
import { bookableProviders, practiceSchedule } from "~/models/schedule/schedule.server";
import { activeRooms, activeSites } from "~/models/schedule/sites.server";
import { redirectWithToast } from "~/utils/toast.server";

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ["owner"]);
  const providers = await bookableProviders();
  const asked = new URL(request.url).searchParams.get("provider");
  const provider = providers.find((p) => p.id === asked) ?? providers[0] ?? null;
  const { timeZone } = await practiceSchedule();
  const [sites, rooms] = await Promise.all([activeSites(), activeRooms()]);
  const places = { sites: sites.map(({ id, name }) => ({ id, name })), rooms };
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
      siteId: h?.siteId ?? sites[0]?.id ?? "",
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

type DayErrors = Record<string, string[]>;

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, ["owner"]);
  const form = await request.formData();
  const providerId = z.uuid().safeParse(form.get("providerId"));
  if (!providerId.success) return data({ errors: { "": ["Choose a provider."] } as DayErrors }, { status: 400 });
  const [provider] = await db
    .select({ id: users.id, name: users.name })
    .from(users)
    .where(and(eq(users.id, providerId.data), eq(users.active, true)));
  if (!provider) return data({ errors: { "": ["No such provider."] } as DayErrors }, { status: 404 });
  const errors: DayErrors = {};
  const hours: { weekday: number; startMinute: number; endMinute: number; siteId: string; roomId: string | null }[] =
    [];
  const breaks: { weekday: number; startMinute: number; endMinute: number; label: string; siteId: string }[] = [];
  const allSites = await db.select().from(sitesTable).where(eq(sitesTable.active, true));
  const allRooms = await db.select().from(roomsTable).where(eq(roomsTable.active, true));
  const opening = await db.select().from(siteOpeningHours);
  const defaultSiteId = allSites.find((x) => x.isDefault)?.id ?? allSites[0]?.id ?? "";
  for (let weekday = 1; weekday <= 7; weekday++) {
    const get = (k: string) => String(form.get(`${k}-${weekday}`) ?? "").trim();
    const [start, end, bs, be] = [get("start"), get("end"), get("breakStart"), get("breakEnd")];
    const label = get("breakLabel").slice(0, 40) || "Break";
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
    const siteId = get("site") || defaultSiteId;
    const site = allSites.find((x) => x.id === siteId);
    if (!site) {
      errors[`hours-${weekday}`] = ["Choose one of the practice's open sites."];
      continue;
    }
    const roomId = get("room") || null;
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
  if (Object.keys(errors).length) return data({ errors }, { status: 400 });
  await db.transaction(async (tx) => {
    await tx.delete(workingHours).where(eq(workingHours.providerId, provider.id));
    await tx.delete(providerBreaks).where(eq(providerBreaks.providerId, provider.id));
    if (hours.length) await tx.insert(workingHours).values(hours.map((h) => ({ ...h, providerId: provider.id })));
    if (breaks.length) await tx.insert(providerBreaks).values(breaks.map((b) => ({ ...b, providerId: provider.id })));
    await audit(
      {
        action: "schedule.hours_changed",
        actorUserId: user.id,
        entityType: "user",
        entityId: provider.id,
        detail: { hours, breaks },
        request,
      },
      tx,
    );
  });
  return redirectWithToast(`/settings/hours?provider=${provider.id}`, {
    kind: "success",
    title: `Working hours of ${provider.name} saved`,
    description: "Existing appointments are kept; new bookings follow the new hours.",
  });
}

type Day = Route.ComponentProps["loaderData"]["days"][number];
type Places = Route.ComponentProps["loaderData"]["places"];
const col = createColumnHelper<Day>();
const TIMES = [
  ["start", "Starts", "starts", "hours"],
  ["end", "Ends", "ends", "hours"],
  ["breakStart", "Break from", "break from", "break"],
  ["breakEnd", "Break to", "break to", "break"],
] as const;

/** One row per weekday; the site and room columns only when the practice has more than one site, or rooms. */
function hoursColumns(places: Places, errors: DayErrors) {
  return [
    col.accessor("name", {
      header: "Day",
      meta: { rowHeader: true },
      cell: ({ row: { original: d } }) => (
        <>
          {d.name}
          <ErrorList id={`hours-${d.weekday}-err`} errors={errors[`hours-${d.weekday}`]} />
          <ErrorList id={`break-${d.weekday}-err`} errors={errors[`break-${d.weekday}`]} />
        </>
      ),
    }),
    ...(places.sites.length > 1
      ? [
          col.accessor("siteId", {
            header: "Site",
            cell: ({ row: { original: d } }) => (
              <>
                <label className="sr-only" htmlFor={`site-${d.weekday}`}>
                  {d.name} site
                </label>
                <Select id={`site-${d.weekday}`} name={`site-${d.weekday}`} defaultValue={d.siteId} className="w-44">
                  {places.sites.map((x) => (
                    <option key={x.id} value={x.id}>
                      {x.name}
                    </option>
                  ))}
                </Select>
              </>
            ),
          }),
        ]
      : []),
    ...(places.rooms.length
      ? [
          col.accessor("roomId", {
            header: "Room",
            cell: ({ row: { original: d } }) => (
              <>
                <label className="sr-only" htmlFor={`room-${d.weekday}`}>
                  {d.name} room
                </label>
                <Select id={`room-${d.weekday}`} name={`room-${d.weekday}`} defaultValue={d.roomId} className="w-44">
                  <option value="">No fixed room</option>
                  {places.sites.map((x) => (
                    <optgroup key={x.id} label={x.name}>
                      {places.rooms
                        .filter((r) => r.siteId === x.id)
                        .map((r) => (
                          <option key={r.id} value={r.id}>
                            {r.name}
                          </option>
                        ))}
                    </optgroup>
                  ))}
                </Select>
              </>
            ),
          }),
        ]
      : []),
    ...TIMES.map(([k, header, said, group]) =>
      col.accessor(k, {
        header,
        cell: ({ row: { original: d } }) => (
          <TimeInput
            name={`${k}-${d.weekday}`}
            label={`${d.name} ${said}`}
            defaultValue={d[k]}
            errorId={errors[`${group}-${d.weekday}`] ? `${group}-${d.weekday}-err` : undefined}
          />
        ),
      }),
    ),
    col.accessor("breakLabel", {
      header: "Break name",
      cell: ({ row: { original: d } }) => (
        <>
          <label className="sr-only" htmlFor={`breakLabel-${d.weekday}`}>
            {d.name} break name
          </label>
          <Input
            id={`breakLabel-${d.weekday}`}
            name={`breakLabel-${d.weekday}`}
            type="text"
            defaultValue={d.breakLabel}
            className="w-32"
          />
        </>
      ),
    }),
  ];
}

export default function Hours({ loaderData, actionData }: Route.ComponentProps) {
  const { providers, provider, days, timeZone, places } = loaderData;
  const navigation = useNavigation();
  const errors = navigation.state === "idle" ? ((actionData as { errors?: DayErrors } | undefined)?.errors ?? {}) : {};
  if (!provider) return <Notice tone="info" title="No optometrist or owner accounts to set hours for." />;
  return (
    <SettingsPage
      title="Working hours"
      description={`When each provider can be booked, in the practice's time (${timeZone}). Leave a day empty for a day off. Hours must fit inside the site's opening hours; closures and leave are under Opening and closures.`}
      notice={refusalNotice(errors, "days")}
    >
      <Form method="get" className="flex items-end gap-3">
        <div>
          <label htmlFor="hours-provider" className="mb-1 block text-sm font-semibold">
            Provider
          </label>
          <Select id="hours-provider" name="provider" defaultValue={provider.id} className="w-64">
            {providers.map((p) => (
              <option key={p.id} value={p.id}>
                {p.name}
              </option>
            ))}
          </Select>
        </div>
        <Button type="submit" variant="secondary">
          Show
        </Button>
      </Form>
      <Form method="post" key={provider.id}>
        <input type="hidden" name="providerId" value={provider.id} />
        <SettingsSection title={`Week of ${provider.name}`}>
          <DataTable
            data={days}
            columns={hoursColumns(places, errors)}
            getRowId={(d) => String(d.weekday)}
            caption={`Working week of ${provider.name}`}
            empty="No days to show."
          />
          <Button type="submit" className="mt-4" pending={navigation.state === "submitting"}>
            Save working hours
          </Button>
        </SettingsSection>
      </Form>
    </SettingsPage>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Working hours · Dioptra" }];
