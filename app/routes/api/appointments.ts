import { createHash } from "node:crypto";
import { data } from "react-router";
import type { Route } from "./+types/appointments";
import {
  bookingErrorJson,
  bookingSchema,
  errorJson,
  eventJson,
  isoTime,
  readBody,
  zodFieldErrors,
} from "~/models/schedule/schedule-api.server";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import {
  appointmentsBetween,
  bookAppointment,
  BookingError,
  calendarEventsJson,
  practiceSchedule,
} from "~/models/schedule/schedule.server";
import { siteTimeZone } from "~/models/schedule/sites.server";
import { z } from "zod";

/**
 * GET /api/appointments?start=&end=&provider= — the calendar's events as a `CalendarFeed`
 * (~/lib/scheduling/calendar-feed), with an ETag (an unchanged week answers 304), times as ISO 8601 with
 * the offset of the chosen site's zone (every site: the practice's). `start`/`end` with an offset
 * are instants; without one they are wall times in that zone (as the calendar sends them). `provider` is a user id or "all",
 * `site` a site id or "all".
 */
export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, STAFF_ROLES);
  const url = new URL(request.url);
  const timeZone = (await siteTimeZone(url.searchParams.get("site"))) ?? (await practiceSchedule()).timeZone;
  const parsed = z
    .object({
      start: isoTime(timeZone, "start"),
      end: isoTime(timeZone, "end"),
      provider: z.union([z.literal("all"), z.uuid({ error: "provider must be a user id or all." })]).default("all"),
      site: z.union([z.literal("all"), z.uuid({ error: "site must be a site id or all." })]).default("all"),
      includeCancelled: z.enum(["0", "1"]).default("0"),
    })
    .refine((v) => v.end > v.start, { message: "end must be after start.", path: ["end"] })
    .refine((v) => v.end.getTime() - v.start.getTime() <= 62 * 86_400_000, {
      message: "Ask for at most 62 days at a time.",
      path: ["end"],
    })
    .safeParse(Object.fromEntries([...url.searchParams.entries()].filter(([k]) => k !== "timeZone" && k !== "_")));
  if (!parsed.success) return errorJson(400, "Check the query.", zodFieldErrors(parsed.error));
  const { start, end, provider, site, includeCancelled } = parsed.data;
  const events = await calendarEventsJson(start, end, timeZone, {
    providerId: provider === "all" ? undefined : provider,
    siteId: site === "all" ? undefined : site,
    includeCancelled: includeCancelled === "1",
  });
  // An unchanged week answers 304 to the browser's If-None-Match: the body is not sent again.
  const etag = `"${createHash("sha256").update(events).digest("base64url").slice(0, 27)}"`;
  const headers = {
    "content-type": "application/json; charset=utf-8",
    etag,
    // Kept by the browser but checked with the server on every use (appointments change all day).
    "cache-control": "private, no-cache",
    vary: "cookie",
  };
  if (ifNoneMatch(request, etag)) return new Response(null, { status: 304, headers });
  return new Response(events, { headers });
}

/** Whether the request's If-None-Match names this ETag (RFC 9110 §13.1.2; weak comparison). */
function ifNoneMatch(request: Request, etag: string) {
  const header = request.headers.get("if-none-match");
  if (!header) return false;
  return header
    .split(",")
    .map((t) => t.trim().replace(/^W\//, ""))
    .some((t) => t === "*" || t === etag);
}

/**
 * POST /api/appointments — book: JSON `{ patientId, providerId, appointmentTypeId, start, end?, siteId?, roomId? }`;
 * times without an offset are wall times at the site asked for (else the practice's zone).
 * 201 with the appointment; 409 naming the clash; 400 for a malformed body; 422 or 404 with field
 * errors for a booking the rules refuse (past, outside hours, unknown patient or provider…).
 */
export async function action({ request }: Route.ActionArgs) {
  if (request.method !== "POST")
    throw data({ error: "Use POST to book; PATCH /api/appointments/:id to change." }, { status: 405 });
  const user = await requireRole(request, STAFF_ROLES);
  const body = await readBody(request);
  const timeZone = (await siteTimeZone(body.siteId)) ?? (await practiceSchedule()).timeZone;
  const parsed = bookingSchema(timeZone).safeParse(body);
  if (!parsed.success) return errorJson(400, "Check the fields.", zodFieldErrors(parsed.error));
  try {
    const appt = await bookAppointment(user, parsed.data, request);
    const [event] = await appointmentsBetween(appt.startsAt, appt.endsAt, { providerId: appt.providerId });
    return Response.json(
      { appointment: eventJson(event!, timeZone) },
      { status: 201, headers: { location: `/api/appointments/${appt.id}` } },
    );
  } catch (error) {
    if (error instanceof BookingError) return bookingErrorJson(error);
    throw error;
  }
}
