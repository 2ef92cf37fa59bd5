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
import { WEEKDAY_NAMES } from "~/lib/scheduling/hours";
import { requireRole } from "~/utils/auth.server";
import {
  activeProvider,
  checkWorkingWeek,
  saveWorkingWeek,
  workingHoursPage,
  type DayEntry,
} from "~/models/settings/hours.server";
import { redirectWithToast } from "~/utils/toast.server";

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ["owner"]);
  return workingHoursPage(new URL(request.url).searchParams.get("provider"));
}

type DayErrors = Record<string, string[]>;

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, ["owner"]);
  const form = await request.formData();
  const providerId = z.uuid().safeParse(form.get("providerId"));
  if (!providerId.success) return data({ errors: { "": ["Choose a provider."] } as DayErrors }, { status: 400 });
  const provider = await activeProvider(providerId.data);
  if (!provider) return data({ errors: { "": ["No such provider."] } as DayErrors }, { status: 404 });
  const entries: DayEntry[] = WEEKDAY_NAMES.map((_, i) => {
    const weekday = i + 1;
    const get = (k: string) => String(form.get(`${k}-${weekday}`) ?? "").trim();
    return {
      weekday,
      start: get("start"),
      end: get("end"),
      breakStart: get("breakStart"),
      breakEnd: get("breakEnd"),
      breakLabel: get("breakLabel"),
      siteId: get("site"),
      roomId: get("room"),
    };
  });
  const { errors, hours, breaks } = await checkWorkingWeek(entries);
  if (Object.keys(errors).length) return data({ errors }, { status: 400 });
  await saveWorkingWeek(provider.id, hours, breaks, { userId: user.id, request });
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
