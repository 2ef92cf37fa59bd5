import { dateTimeFormat } from "~/lib/format/intl";
import { lazy, Suspense, useCallback, useEffect, useRef, useState } from "react";
import { data, Form, Link, useLocation, useNavigate, useSearchParams } from "react-router";
import type { Route } from "./+types/index";
import { BookingForm } from "./booking-form";
import { CalendarLegend, CalendarNotice, FreeTimes, type Message } from "./calendar-parts";
import type { CalendarMessage } from "./calendar-view";
import { scheduleReferenceData } from "~/models/schedule/schedule-data.server";
import { businessSpans, freeTimes } from "~/models/schedule/calendar-page.server";
import { ScheduleNav } from "./schedule-nav";
import { useHydrated } from "~/components/use-hydrated";
import { PageHeader } from "~/components/page-header";
import { buttonClass } from "~/components/ui/button";
import { Select } from "~/components/ui/input";
import { addDays, localParts } from "~/lib/scheduling/time";
import { typeColours } from "~/lib/scheduling/type-colours";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { practiceSchedule } from "~/models/schedule/schedule.server";
import { siteChoice, zoneOfChoice } from "~/models/schedule/sites.server";

const CalendarView = lazy(() => import("./calendar-view"));
const VIEWS = ["timeGridDay", "timeGridWeek", "dayGridMonth", "clinicians"] as const;

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireRole(request, STAFF_ROLES);
  const url = new URL(request.url);
  const practice = await practiceSchedule();
  const { providers, types, hours, breaks, sites, rooms } = await scheduleReferenceData();
  // The site filter: asked for, else the user's last choice (cookie), else every site.
  const { site, setCookie } = await siteChoice(request, sites);
  // Times are the chosen site's wall clock (each site has its own zone); every site together: the practice's.
  const timeZone = zoneOfChoice(site, sites, practice.timeZone);
  const siteName = sites.find((s) => s.id === site)?.name ?? null;
  const asked = url.searchParams.get("provider");
  // An optometrist starts on their own column; the front desk on the whole practice.
  const provider =
    asked === "all" || providers.some((p) => p.id === asked)
      ? asked!
      : providers.some((p) => p.id === user.id) && user.role === "optometrist"
        ? user.id
        : "all";
  const view = (VIEWS as readonly string[]).includes(url.searchParams.get("view") ?? "")
    ? (url.searchParams.get("view") as (typeof VIEWS)[number])
    : "timeGridWeek";
  const date = /^\d{4}-\d{2}-\d{2}$/.test(url.searchParams.get("date") ?? "")
    ? url.searchParams.get("date")!
    : localParts(new Date(), timeZone).date;
  const shown = providers.filter((p) => provider === "all" || p.id === provider);
  return data(
    {
      timeZone,
      siteName,
      providers: providers.map(({ id, name }) => ({ id, name })),
      types,
      provider,
      view,
      date,
      // Business hours shown shaded in the calendar: the chosen provider's (or everyone's) working spans less breaks.
      businessHours: businessSpans(hours, breaks, provider, site),
      columns: shown.map((p) => ({ id: p.id, name: p.name, businessHours: businessSpans(hours, breaks, p.id, site) })),
      free: await freeTimes(date, timeZone, shown, hours, breaks, site),
      site,
      places: { sites: sites.map(({ id, name }) => ({ id, name })), rooms },
    },
    setCookie ? { headers: { "set-cookie": setCookie } } : undefined,
  );
}

export default function Schedule({ loaderData }: Route.ComponentProps) {
  const { timeZone, siteName, providers, types, provider, view, date, businessHours, site, places } = loaderData;
  const { columns, free } = loaderData;
  const hydrated = useHydrated();
  const [message, setMessage] = useState<Message>(null);
  const showMessage = useCallback<CalendarMessage>((tone, text, undo) => setMessage({ tone, text, undo }), []);
  const [booking, setBooking] = useState<{ start: string; providerId?: string } | null>(null);
  const dialog = useRef<HTMLDialogElement>(null);
  const navigate = useNavigate();
  const location = useLocation();
  const [params] = useSearchParams();
  useEffect(() => {
    if (booking) dialog.current?.showModal();
    else dialog.current?.close();
  }, [booking]);
  // A booking redirects back here: close the dialog.
  const [locationSeen, setLocationSeen] = useState(location.key);
  if (location.key !== locationSeen) {
    setLocationSeen(location.key);
    setBooking(null);
  }
  const colours = typeColours(types.map((t) => t.id));
  const query = (v: string, d: string) => `?provider=${provider}&site=${site}&view=${v}&date=${d}`;
  const calendarKey = `${provider}|${site}|${params.get("date") ?? ""}|${location.key}`;
  const side = view === "clinicians";
  const calendar = (extra: { provider: string; businessHours: typeof businessHours; column?: boolean }) => (
    <Suspense fallback={<p className="p-6 text-muted">Loading the calendar…</p>}>
      <CalendarView
        key={`${calendarKey}|${extra.provider}`}
        timeZone={timeZone}
        site={site}
        initialDate={date}
        initialView={side ? "timeGridDay" : view}
        colours={colours}
        onSelectSlot={(start) =>
          setBooking({ start, providerId: extra.provider === "all" ? undefined : extra.provider })
        }
        onOpen={(id) => navigate(`/schedule/appointments/${id}`)}
        onMessage={showMessage}
        {...extra}
      />
    </Suspense>
  );
  const dayTitle = dateTimeFormat("en-GB", { dateStyle: "full", timeZone: "UTC" }).format(
    new Date(`${date}T12:00:00Z`),
  );
  return (
    <>
      <PageHeader
        title="Schedule"
        description={`Times are ${siteName ? `${siteName}'s` : "the practice's"} (${timeZone}). Select an empty time to book, or use the free times below the calendar; drag to move; drag the lower edge to lengthen.`}
        actions={
          <>
            <a href="#free-title" className={buttonClass("primary")}>
              Book a time
            </a>
            <Link to="/schedule/book" className={buttonClass("secondary")}>
              Book without the calendar
            </Link>
          </>
        }
      />
      <ScheduleNav />
      <Form method="get" className="mb-4 flex flex-wrap items-end gap-3">
        <div>
          <label htmlFor="provider" className="mb-1 block text-sm font-semibold">
            Whose diary
          </label>
          <Select
            id="provider"
            name="provider"
            defaultValue={provider}
            className="w-64"
            onChange={(e) => e.currentTarget.form?.requestSubmit()}
          >
            <option value="all">Whole practice</option>
            {providers.map((p) => (
              <option key={p.id} value={p.id}>
                {p.name}
              </option>
            ))}
          </Select>
        </div>
        {places.sites.length > 1 ? (
          <div>
            <label htmlFor="site" className="mb-1 block text-sm font-semibold">
              Site
            </label>
            <Select
              id="site"
              name="site"
              defaultValue={site}
              className="w-56"
              onChange={(e) => e.currentTarget.form?.requestSubmit()}
            >
              <option value="all">Every site</option>
              {places.sites.map((s) => (
                <option key={s.id} value={s.id}>
                  {s.name}
                </option>
              ))}
            </Select>
          </div>
        ) : null}
        <input type="hidden" name="view" value={view} />
        <input type="hidden" name="date" value={date} />
        <noscript>
          <button type="submit" className={buttonClass("secondary")}>
            Show
          </button>
        </noscript>
        <Link to={query(side ? "timeGridWeek" : "clinicians", date)} className={buttonClass("secondary", "ml-auto")}>
          {side ? "Back to the week" : "Day by clinician"}
        </Link>
      </Form>
      <CalendarLegend types={types} colours={colours} />
      <CalendarNotice message={message} onClose={() => setMessage(null)} />
      <div
        className="schedule-calendar rounded-lg border border-line bg-white p-3 shadow-sm"
        style={
          {
            "--fc-button-bg-color": "#0d5c62",
            "--fc-button-text-color": "#ffffff",
            "--fc-button-border-color": "#0d5c62",
            "--fc-button-hover-bg-color": "#0a474c",
            "--fc-button-hover-border-color": "#0a474c",
            "--fc-button-active-bg-color": "#052a2d",
            "--fc-button-active-border-color": "#052a2d",
            "--fc-today-bg-color": "#eef8f8",
            "--fc-non-business-color": "rgba(213, 221, 228, 0.45)",
          } as React.CSSProperties
        }
      >
        {side ? (
          <div className="mb-3 flex flex-wrap items-center gap-2">
            <Link className={buttonClass("secondary", "px-3 py-1")} to={query("clinicians", addDays(date, -1))}>
              ‹ Previous day
            </Link>
            <Link className={buttonClass("secondary", "px-3 py-1")} to={query("clinicians", addDays(date, 1))}>
              Next day ›
            </Link>
            <h2 className="ml-2 text-lg font-semibold">{dayTitle}</h2>
          </div>
        ) : null}
        {!hydrated ? (
          <p className="p-6 text-muted">Loading the calendar…</p>
        ) : side ? (
          <div
            className="grid gap-3 overflow-x-auto"
            style={{ gridTemplateColumns: `repeat(${columns.length}, minmax(16rem, 1fr))` }}
          >
            {columns.map((c) => (
              <section key={c.id} aria-label={`${c.name}'s day`} data-clinician={c.name}>
                <h3 className="mb-1 truncate border-b-2 border-accent-700 pb-1 text-center font-semibold">{c.name}</h3>
                {calendar({ provider: c.id, businessHours: c.businessHours, column: true })}
              </section>
            ))}
          </div>
        ) : (
          calendar({ provider, businessHours })
        )}
      </div>
      <FreeTimes
        date={date}
        free={free}
        dayLink={(d, offset) => query(view, addDays(d, offset))}
        onBook={(start, providerId) => setBooking({ start, providerId })}
      />
      <dialog
        ref={dialog}
        aria-labelledby="book-title"
        className="m-auto w-[min(44rem,calc(100vw-2rem))] rounded-lg border border-line p-0 shadow-xl backdrop:bg-ink/40"
        onClose={() => setBooking(null)}
      >
        <div className="p-6">
          <h2 id="book-title" className="mb-4 text-xl">
            Book an appointment
          </h2>
          {booking ? (
            <BookingForm
              key={booking.start}
              providers={providers}
              types={types}
              places={places}
              defaults={{
                start: booking.start,
                providerId: booking.providerId ?? (provider === "all" ? undefined : provider),
                siteId: site === "all" ? undefined : site,
              }}
              returnTo={`/schedule?provider=${provider}&view=${view}&date=${booking.start.slice(0, 10)}`}
              onCancel={() => setBooking(null)}
            />
          ) : null}
        </div>
      </dialog>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Schedule · Dioptra" }];
