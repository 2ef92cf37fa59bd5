import { createColumnHelper } from "@tanstack/react-table";
import { data, Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/sites";
import { ErrorList, Field } from "~/components/forms";
import { DataTable } from "~/components/data-table";
import { refusalNotice, SettingsPage, SettingsSection, TimeInput } from "~/components/settings-page";
import { Button, buttonClass } from "~/components/ui/button";
import { Input } from "~/components/ui/input";
import { StatusBadge } from "~/components/ui/notice";
import { hhmmToMinutes } from "~/lib/scheduling/time";
import { requireRole } from "~/utils/auth.server";
import {
  saveSite,
  siteChangeRefusals,
  sitesPage,
  siteToChange,
  type RoomChange,
  type SiteHours,
} from "~/models/settings/sites.server";
import { redirectWithToast } from "~/utils/toast.server";

type Errors = Record<string, string[]>;

const validZone = (tz: string) => {
  try {
    new Intl.DateTimeFormat("en-GB", { timeZone: tz });
    return true;
  } catch {
    return false;
  }
};

const detailsSchema = z.object({
  name: z.string().trim().min(2, "Give the site's name.").max(80, "At most 80 characters."),
  addressLine1: z.string().trim().max(200),
  addressLine2: z.string().trim().max(200),
  city: z.string().trim().max(100),
  postcode: z.string().trim().max(20),
  phone: z.string().trim().max(40),
  timeZone: z.string().trim().refine(validZone, "Use an IANA time zone such as Europe/London."),
});

/** Settings → Sites: the practice's locations, their opening hours and rooms (owner only). */
export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ["owner"]);
  return sitesPage(new URL(request.url).searchParams.get("site"));
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, ["owner"]);
  const form = await request.formData();
  const get = (k: string) => String(form.get(k) ?? "").trim();
  const siteId = get("siteId");
  const errors: Errors = {};
  const parsed = detailsSchema.safeParse(
    Object.fromEntries(
      ["name", "addressLine1", "addressLine2", "city", "postcode", "phone", "timeZone"].map((k) => [k, get(k)]),
    ),
  );
  if (!parsed.success)
    for (const issue of parsed.error.issues) (errors[String(issue.path[0])] ??= []).push(issue.message);
  const isDefault = form.get("isDefault") === "on";
  const active = form.get("active") === "on";
  if (isDefault && !active) errors.active = ["The default site must be open."];

  const hours: SiteHours[] = [];
  for (let weekday = 1; weekday <= 7; weekday++) {
    const [open, close] = [get(`open-${weekday}`), get(`close-${weekday}`)];
    if (!open && !close) continue;
    const s = hhmmToMinutes(open);
    const e = hhmmToMinutes(close);
    if (s === null || e === null)
      errors[`hours-${weekday}`] = ["Give both times as HH:MM, or leave both empty when closed."];
    else if (e <= s) errors[`hours-${weekday}`] = ["Closing must be after opening."];
    else hours.push({ weekday, startMinute: s, endMinute: e });
  }

  if (siteId && !z.uuid().safeParse(siteId).success)
    return data({ errors: { "": ["No such site."] } as Errors }, { status: 404 });
  const existing = siteId ? await siteToChange(siteId) : null;
  if (siteId && !existing) return data({ errors: { "": ["No such site."] } as Errors }, { status: 404 });
  const before = existing?.site ?? null;
  const roomChanges: RoomChange[] = (existing?.rooms ?? []).map((r) => ({
    id: r.id,
    name: get(`room-${r.id}`),
    active: form.get(`roomActive-${r.id}`) === "on",
  }));
  for (const r of roomChanges)
    if (r.name.length < 1 || r.name.length > 60)
      errors[`room-${r.id}`] = ["Give the room a name (at most 60 characters)."];
  const newRoom = get("newRoom");
  if (newRoom.length > 60) errors.newRoom = ["At most 60 characters."];
  const names = [...roomChanges.map((r) => r.name.toLowerCase()), ...(newRoom ? [newRoom.toLowerCase()] : [])];
  if (new Set(names).size !== names.length) errors.newRoom = ["Two rooms of one site cannot share a name."];

  Object.assign(errors, await siteChangeRefusals(before, { name: get("name"), active, isDefault, hours, roomChanges }));
  if (Object.keys(errors).length || !parsed.success) return data({ errors }, { status: 400 });

  const id = await saveSite(
    before,
    { details: parsed.data, isDefault, active, hours, roomChanges, newRoom },
    { userId: user.id, request },
  );
  return redirectWithToast(`/settings/sites?site=${id}`, { kind: "success", title: `Site ${parsed.data.name} saved` });
}

type Day = Route.ComponentProps["loaderData"]["days"][number];
const col = createColumnHelper<Day>();

/** A row per weekday: its name (with the day's errors), then when the site opens and closes. */
const openingColumns = (errors: Errors) => [
  col.accessor("name", {
    header: "Day",
    meta: { rowHeader: true },
    cell: ({ row: { original: d } }) => (
      <>
        {d.name}
        <ErrorList id={`hours-${d.weekday}-err`} errors={errors[`hours-${d.weekday}`]} />
      </>
    ),
  }),
  ...(["open", "close"] as const).map((k) =>
    col.accessor(k, {
      header: k === "open" ? "Opens" : "Closes",
      cell: ({ row: { original: d } }) => (
        <TimeInput
          name={`${k}-${d.weekday}`}
          label={`${d.name} ${k === "open" ? "opens" : "closes"}`}
          defaultValue={d[k]}
          errorId={errors[`hours-${d.weekday}`] ? `hours-${d.weekday}-err` : undefined}
        />
      ),
    }),
  ),
];

export default function Sites({ loaderData, actionData }: Route.ComponentProps) {
  const { sites: list, current, days, rooms: siteRooms } = loaderData;
  const navigation = useNavigation();
  const errors: Errors =
    navigation.state === "idle" ? ((actionData as { errors?: Errors } | undefined)?.errors ?? {}) : {};
  const v = current ?? {
    id: "",
    name: "",
    addressLine1: "",
    addressLine2: "",
    city: "",
    postcode: "",
    phone: "",
    timeZone: "Europe/London",
    isDefault: false,
    active: true,
  };
  const input = (name: keyof typeof v, type = "text") => ({
    id: `site-${name}`,
    name,
    type,
    defaultValue: String(v[name] ?? ""),
  });
  return (
    <SettingsPage
      title="Sites"
      description="Where the practice sees patients: each site's address, opening hours and rooms. Bookings, working hours and invoices belong to a site; the default site takes anything not given one."
      actions={
        <Link to="?site=new" className={buttonClass("secondary")}>
          Add a site
        </Link>
      }
      notice={refusalNotice(errors)}
      list={{
        title: "The practice's sites",
        content: (
          <ul className="grid gap-3 sm:grid-cols-2" aria-label="The practice's sites">
            {list.map((s) => (
              <li
                key={s.id}
                className={`rounded-lg border p-4 ${current?.id === s.id ? "border-accent-700" : "border-line"}`}
              >
                <Link
                  to={`?site=${s.id}`}
                  className="font-semibold text-accent-700 underline underline-offset-4"
                  aria-current={current?.id === s.id ? "page" : undefined}
                >
                  {s.name}
                </Link>{" "}
                {s.isDefault ? <StatusBadge tone="info">Default</StatusBadge> : null}{" "}
                {!s.active ? <StatusBadge tone="warning">Closed</StatusBadge> : null}
                <p className="text-sm text-muted">{s.address || "No address yet"}</p>
              </li>
            ))}
          </ul>
        ),
      }}
    >
      <Form method="post" key={current?.id ?? "new"} className="space-y-6">
        <input type="hidden" name="siteId" value={current?.id ?? ""} />
        <SettingsSection title={current ? `Site: ${current.name}` : "New site"}>
          <div className="grid gap-4 sm:grid-cols-2">
            <Field label="Name" errors={errors.name} inputProps={input("name")} />
            <Field label="Phone" errors={errors.phone} inputProps={input("phone", "tel")} />
            <Field label="Address" errors={errors.addressLine1} inputProps={input("addressLine1")} />
            <Field label="Address (second line)" errors={errors.addressLine2} inputProps={input("addressLine2")} />
            <Field label="Town or city" errors={errors.city} inputProps={input("city")} />
            <Field label="Postcode" errors={errors.postcode} inputProps={input("postcode")} />
            <Field
              label="Time zone"
              hint="IANA name, e.g. Europe/London."
              errors={errors.timeZone}
              inputProps={input("timeZone")}
            />
          </div>
          <div className="mt-4 space-y-2">
            {(
              [
                ["isDefault", "Default site (bookings, hours and invoices without a site go here)"],
                ["active", "Open (can be booked)"],
              ] as const
            ).map(([name, label]) => (
              <div key={name}>
                <label className="flex items-center gap-2">
                  <input
                    type="checkbox"
                    name={name}
                    defaultChecked={v[name]}
                    className="size-4 accent-accent-700"
                    aria-describedby={errors[name] ? `site-${name}-error` : undefined}
                  />
                  {label}
                </label>
                <ErrorList id={`site-${name}-error`} errors={errors[name]} />
              </div>
            ))}
          </div>
        </SettingsSection>
        <SettingsSection title="Opening hours">
          <p className="mb-3 text-sm text-muted">
            Leave a day empty when the site is closed. Providers&apos; working hours at this site must fit inside.
          </p>
          <DataTable
            data={days}
            columns={openingColumns(errors)}
            getRowId={(d) => String(d.weekday)}
            caption="Opening hours by day"
            empty="No days to show."
            className="w-fit"
          />
        </SettingsSection>
        <SettingsSection title="Rooms">
          {siteRooms.length ? (
            <ul className="mb-4 space-y-3">
              {siteRooms.map((r) => (
                <li key={r.id} className="flex flex-wrap items-start gap-3">
                  <div>
                    <label htmlFor={`room-${r.id}`} className="sr-only">
                      Room name
                    </label>
                    <Input
                      id={`room-${r.id}`}
                      name={`room-${r.id}`}
                      defaultValue={r.name}
                      className="w-56"
                      aria-invalid={errors[`room-${r.id}`] ? true : undefined}
                      aria-describedby={errors[`room-${r.id}`] ? `room-${r.id}-err` : undefined}
                    />
                    <ErrorList id={`room-${r.id}-err`} errors={errors[`room-${r.id}`]} />
                  </div>
                  <label className="flex items-center gap-2 pt-2 text-sm">
                    <input
                      type="checkbox"
                      name={`roomActive-${r.id}`}
                      defaultChecked={r.active}
                      className="size-4 accent-accent-700"
                    />
                    In use
                  </label>
                </li>
              ))}
            </ul>
          ) : (
            <p className="mb-3 text-sm text-muted">
              No rooms yet. Rooms are optional; with rooms, no room is booked twice at once.
            </p>
          )}
          <Field
            label="Add a room"
            hint="For example Room 3 or Contact lens room."
            errors={errors.newRoom}
            inputProps={{ id: "site-newRoom", name: "newRoom", type: "text" }}
          />
        </SettingsSection>
        <Button type="submit" pending={navigation.state === "submitting"}>
          {current ? "Save site" : "Add site"}
        </Button>
      </Form>
    </SettingsPage>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Sites · Dioptra" }];
