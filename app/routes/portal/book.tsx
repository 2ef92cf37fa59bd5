import { dateTimeFormat } from "~/lib/format/intl";
import { parseWithZod } from "@conform-to/zod/v4";
import { data, Form, Link, useNavigation, useSearchParams } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/book";
import { freeSlots, onlineTypes, portalSettings, requirePortalPatient } from "~/models/portal/portal.server";
import { PageHeader } from "~/components/page-header";
import { Button, buttonClass } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input, Select } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";
import { addDays, localParts } from "~/lib/scheduling";
import { isCalendarDate } from "~/lib/dates/calendar-date";
import { readForm } from "~/utils/form.server";
import { BookingError, bookAppointment, bookingHorizonDays, practiceSchedule } from "~/models/schedule/schedule.server";
import { redirectWithToast } from "~/utils/toast.server";
import { activeSites } from "~/models/schedule/sites.server";

const bookSchema = z.object({
  appointmentTypeId: z.uuid({ error: "Choose a kind of visit." }),
  providerId: z.uuid({ error: "Choose a time." }),
  start: z.iso.datetime({ offset: true, error: "Choose a time." }),
  siteId: z.uuid({ error: "Choose where." }).optional(),
  /** "review" shows the chosen time for a check; only "confirm" books it. */
  step: z.enum(["review", "confirm"]).default("review"),
});

/** Sent as plain HTML, without scripts: choosing a day is a GET form, a time and its check are posts. */
export const handle = { hydrate: false };

export async function loader({ request }: Route.LoaderArgs) {
  await requirePortalPatient(request);
  const url = new URL(request.url);
  const settings = await portalSettings();
  const types = await onlineTypes();
  const today = localParts(new Date(), settings.timeZone).date;
  const typeId = url.searchParams.get("type") ?? types[0]?.id ?? "";
  const wanted = url.searchParams.get("date");
  const lastDate = addDays(today, settings.bookingDays);
  // A real calendar date within the booking horizon; anything else shows tomorrow.
  const valid = isCalendarDate(wanted);
  const date = valid && wanted >= today && wanted <= lastDate ? wanted : addDays(today, 1);
  // Where: one of the practice's sites (the default first); a single-site practice is not asked.
  const sites = await activeSites();
  const site = sites.find((x) => x.id === url.searchParams.get("site")) ?? sites[0];
  // Times are the chosen site's wall clock (each site keeps its own zone).
  const zone = sites.length > 1 && site ? site.timeZone : settings.timeZone;
  const slots = typeId ? await freeSlots(typeId, date, zone, new Date(), sites.length > 1 ? site?.id : undefined) : [];
  return {
    sites: sites.map(({ id, name }) => ({ id, name })),
    siteId: sites.length > 1 ? (site?.id ?? "") : "",
    types: types.map(({ id, name, durationMinutes }) => ({ id, name, durationMinutes })),
    typeId,
    date,
    today,
    lastDate,
    slots,
    timeZone: zone,
    practice: settings.name,
  };
}

export async function action({ request }: Route.ActionArgs) {
  const { user, patientId } = await requirePortalPatient(request);
  const submission = parseWithZod(await readForm(request), { schema: bookSchema });
  if (submission.status !== "success") return data(submission.reply(), { status: 400 });
  const v = submission.value;
  // Only kinds of visit the practice opens to online booking.
  if (!(await onlineTypes()).some((t) => t.id === v.appointmentTypeId)) {
    return data(
      submission.reply({ formErrors: ["That kind of visit cannot be booked online. Please phone the practice."] }),
      { status: 422 },
    );
  }
  // Choosing a time only asks for a check of the details; nothing is booked until it is confirmed.
  if (v.step === "review") {
    // A time past the portal's horizon is refused at once, not only when confirmed.
    const settings = await practiceSchedule();
    const days = bookingHorizonDays(user, settings);
    if (new Date(v.start).getTime() > Date.now() + days * 86_400_000) {
      const until = localParts(new Date(Date.now() + days * 86_400_000), settings.timeZone).date;
      return data(
        submission.reply({ formErrors: [`Bookings can be made at most ${days} days ahead (until ${until}).`] }),
        { status: 422 },
      );
    }
    return {
      review: {
        appointmentTypeId: v.appointmentTypeId,
        providerId: v.providerId,
        start: v.start,
        siteId: v.siteId ?? "",
      },
    };
  }
  try {
    await bookAppointment(
      user,
      {
        patientId,
        providerId: v.providerId,
        appointmentTypeId: v.appointmentTypeId,
        siteId: v.siteId,
        start: new Date(v.start),
        notes: "Booked online by the patient.",
      },
      request,
    );
  } catch (error) {
    if (error instanceof BookingError) {
      const taken = error.status === 409 ? "Someone has just taken that time. Please choose another." : error.message;
      return data(submission.reply({ formErrors: [taken] }), { status: error.status });
    }
    throw error;
  }
  return redirectWithToast("/portal", {
    kind: "success",
    title: "Your visit is booked",
    description: "A confirmation is on its way by e-mail.",
  });
}

export default function BookOnline({ loaderData, actionData }: Route.ComponentProps) {
  const { types, typeId, date, today, lastDate, slots, timeZone, practice, sites, siteId } = loaderData;
  const navigation = useNavigation();
  const [params] = useSearchParams();
  const time = dateTimeFormat("en-GB", { timeStyle: "short", timeZone });
  const dayLabel = dateTimeFormat("en-GB", { dateStyle: "full", timeZone: "UTC" }).format(
    new Date(`${date}T12:00:00Z`),
  );
  const reply = actionData as
    | {
        error?: Record<string, string[] | null> | null;
        review?: { appointmentTypeId: string; providerId: string; start: string; siteId: string };
      }
    | undefined;
  const formError = reply?.error?.[""];
  const review = navigation.state === "idle" ? reply?.review : undefined;
  const chosen = review ? slots.find((s) => s.providerId === review.providerId && s.start === review.start) : undefined;
  const chosenType = review ? types.find((t) => t.id === review.appointmentTypeId) : undefined;
  const chosenSite = review ? sites.find((x) => x.id === review.siteId) : undefined;
  const postTo = `/portal/book${params.size ? `?${params.toString()}` : ""}#choice`;
  return (
    <div className="mx-auto max-w-2xl space-y-6">
      <PageHeader
        title="Book an eye exam"
        description={`Free times at ${practice}. Times are the practice's local time.`}
      />
      {types.length === 0 ? (
        <Notice tone="info" title="Online booking is not open">
          Please phone the practice to book.
        </Notice>
      ) : (
        <>
          <Card title="When">
            <Form method="get" className="grid gap-4 sm:grid-cols-[1fr_12rem_auto] sm:items-end">
              {sites.length > 1 ? (
                <div className="sm:col-span-3">
                  <label htmlFor="site" className="mb-1 block text-sm font-semibold">
                    Where
                  </label>
                  <Select id="site" name="site" defaultValue={siteId}>
                    {sites.map((x) => (
                      <option key={x.id} value={x.id}>
                        {x.name}
                      </option>
                    ))}
                  </Select>
                </div>
              ) : null}
              <div>
                <label htmlFor="type" className="mb-1 block text-sm font-semibold">
                  Kind of visit
                </label>
                <Select id="type" name="type" defaultValue={typeId}>
                  {types.map((t) => (
                    <option key={t.id} value={t.id}>
                      {t.name} ({t.durationMinutes} min)
                    </option>
                  ))}
                </Select>
              </div>
              <div>
                <label htmlFor="date" className="mb-1 block text-sm font-semibold">
                  Day
                </label>
                <Input
                  id="date"
                  name="date"
                  type="date"
                  min={today}
                  max={lastDate}
                  defaultValue={params.get("date") ?? date}
                />
              </div>
              <Button type="submit" variant="secondary">
                Show free times
              </Button>
            </Form>
          </Card>
          {/* The forms post to `#choice`, so the answer (the check, or why not) opens scrolled to it. */}
          <div id="choice" className="space-y-6">
            {review && chosen ? (
              <section
                aria-labelledby="confirm-heading"
                className="rounded-lg border-2 border-accent-700 bg-white p-5 shadow-sm"
                data-testid="booking-review"
              >
                <h2 id="confirm-heading" className="text-lg font-semibold">
                  Check and confirm your visit
                </h2>
                <dl className="mt-3 grid grid-cols-[8rem_1fr] gap-x-4 gap-y-1 text-sm">
                  <dt className="font-semibold">Visit</dt>
                  <dd>{chosenType ? `${chosenType.name} (${chosenType.durationMinutes} min)` : "Eye exam"}</dd>
                  <dt className="font-semibold">When</dt>
                  <dd>
                    {dayLabel}, {time.format(new Date(chosen.start))}
                  </dd>
                  <dt className="font-semibold">With</dt>
                  <dd>{chosen.providerName}</dd>
                  <dt className="font-semibold">Where</dt>
                  <dd>{chosenSite ? `${practice}, ${chosenSite.name}` : practice}</dd>
                </dl>
                <p className="mt-3 text-sm text-muted">
                  Nothing is booked until you press “Book this visit”. You will get a confirmation by e-mail.
                </p>
                <div className="mt-4 flex flex-wrap items-center gap-4">
                  <Form method="post" action={postTo}>
                    <input type="hidden" name="step" value="confirm" />
                    <input type="hidden" name="appointmentTypeId" value={review.appointmentTypeId} />
                    <input type="hidden" name="providerId" value={review.providerId} />
                    <input type="hidden" name="start" value={review.start} />
                    {review.siteId ? <input type="hidden" name="siteId" value={review.siteId} /> : null}
                    <Button type="submit" pending={navigation.state !== "idle"}>
                      Book this visit
                    </Button>
                  </Form>
                  <Link
                    to={`?${params.toString()}`}
                    className="font-semibold text-accent-700 underline underline-offset-4"
                  >
                    Choose another time
                  </Link>
                </div>
              </section>
            ) : null}
            <Card title={`Free times on ${dayLabel}`}>
              {formError?.length ? (
                <div className="mb-4">
                  <Notice tone="error" title="Not booked">
                    {formError.join(" ")}
                  </Notice>
                </div>
              ) : null}
              {slots.length ? (
                <ul className="grid grid-cols-2 gap-2 sm:grid-cols-3">
                  {slots.map((s) => (
                    <li key={`${s.providerId}-${s.start}`}>
                      <Form method="post" action={postTo}>
                        <input type="hidden" name="step" value="review" />
                        <input type="hidden" name="appointmentTypeId" value={typeId} />
                        <input type="hidden" name="providerId" value={s.providerId} />
                        <input type="hidden" name="start" value={s.start} />
                        {siteId ? <input type="hidden" name="siteId" value={siteId} /> : null}
                        <button
                          type="submit"
                          disabled={navigation.state !== "idle"}
                          aria-pressed={chosen?.start === s.start && chosen?.providerId === s.providerId}
                          className={buttonClass("secondary", "w-full flex-col !items-start !gap-0 text-left")}
                        >
                          <span className="text-base">{time.format(new Date(s.start))}</span>
                          <span className="text-xs font-normal text-muted">with {s.providerName}</span>
                        </button>
                      </Form>
                    </li>
                  ))}
                </ul>
              ) : (
                <p className="text-muted">No free times that day. Try another day.</p>
              )}
              <p className="mt-4 text-sm">
                <Link to="/portal" className="font-semibold text-accent-700 underline underline-offset-4">
                  Back to my visits
                </Link>
              </p>
            </Card>
          </div>
        </>
      )}
    </div>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Book an eye exam · Dioptra" }];
