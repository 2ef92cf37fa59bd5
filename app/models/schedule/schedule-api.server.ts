/** Parsing and answering shared by the schedule's JSON routes and pages. */
import { data } from "react-router";
import { z } from "zod";
import { localParts, toZonedIso, wallTimeToInstant } from "~/lib/scheduling/time";
import { BookingError, type CalendarEvent } from "~/models/schedule/schedule.server";
import { STATUS_LABEL, isMovable } from "~/lib/scheduling/status";

const OFFSET = /(Z|[+-]\d{2}:?\d{2})$/i;
const LOCAL = /^(\d{4}-\d{2}-\d{2})(?:T(\d{2}):(\d{2})(?::(\d{2})(?:\.\d+)?)?)?$/;

/**
 * An ISO 8601 time. With an offset (or Z) it is that instant; without one (a bare date, or a
 * date and time as the calendar sends in a named zone) it is wall time in the practice's zone.
 */
export function parseIsoInZone(value: string, timeZone: string): Date | null {
  const v = value.trim();
  if (OFFSET.test(v)) {
    const d = new Date(v);
    return Number.isNaN(d.getTime()) || !/^\d{4}-\d{2}-\d{2}T/.test(v) ? null : d;
  }
  const m = LOCAL.exec(v);
  if (!m) return null;
  return wallTimeToInstant(m[1]!, Number(m[2] ?? 0) * 60 + Number(m[3] ?? 0), timeZone);
}

export const isoTime = (timeZone: string, label: string) =>
  z.string({ error: `Give the ${label} date and time, for example 2027-03-29T09:00.` }).transform((v, ctx) => {
    const d = parseIsoInZone(v, timeZone);
    if (!d) {
      ctx.addIssue({
        code: "custom",
        message: `The ${label} is not a date and time we can read (write it like 2027-03-29T09:00), or that time does not exist in ${timeZone} because the clocks change.`,
      });
      return z.NEVER;
    }
    return d;
  });

export function bookingSchema(timeZone: string) {
  return z
    .object({
      patientId: z.uuid({ error: "Choose a patient." }),
      providerId: z.uuid({ error: "Choose a provider." }),
      appointmentTypeId: z.uuid({ error: "Choose an appointment type." }),
      start: isoTime(timeZone, "start"),
      end: isoTime(timeZone, "end").optional(),
      notes: z.string().trim().max(1000, "At most 1000 characters.").optional(),
      siteId: z.uuid({ error: "Choose a site." }).optional(),
      roomId: z.uuid({ error: "Choose a room." }).optional(),
    })
    .refine((v) => !v.end || v.end > v.start, { message: "The end must be after the start.", path: ["end"] });
}

/** Field errors of a zod failure, keyed by field name ("" for the whole body). */
export function zodFieldErrors(error: z.ZodError): Record<string, string[]> {
  const out: Record<string, string[]> = {};
  for (const issue of error.issues) {
    const key = issue.path.join(".") || "";
    (out[key] ??= []).push(issue.message);
  }
  return out;
}

/** JSON answer for a refused request. */
export function errorJson(
  status: number,
  error: string,
  fieldErrors: Record<string, string[]> = {},
  extra: Record<string, unknown> = {},
) {
  return Response.json({ error, fieldErrors, ...extra }, { status });
}

export function bookingErrorJson(e: BookingError) {
  return errorJson(e.status, e.message, e.fieldErrors, e.clash ? { clash: e.clash } : {});
}

/** Reads a JSON or form body; a malformed body is a 400, not a 500. */
export async function readBody(request: Request): Promise<Record<string, unknown>> {
  const type = request.headers.get("content-type") ?? "";
  if (type.includes("application/json")) {
    try {
      const body = await request.json();
      if (!body || typeof body !== "object" || Array.isArray(body)) throw new Error();
      return body as Record<string, unknown>;
    } catch {
      throw data(
        { error: "The body is not a JSON object.", fieldErrors: { "": ["The body is not a JSON object."] } },
        { status: 400 },
      );
    }
  }
  const form = await request.formData();
  return Object.fromEntries([...form.entries()].filter(([, v]) => typeof v === "string" && v !== "")) as Record<
    string,
    string
  >;
}

/** One appointment as the calendar (FullCalendar event object) and integrations see it. */
export function eventJson(e: CalendarEvent, timeZone: string) {
  return {
    id: e.id,
    title: `${e.patientName} · ${e.typeName}`,
    start: toZonedIso(e.start, timeZone),
    end: toZonedIso(e.end, timeZone),
    editable: isMovable(e.status),
    classNames: [`appt-${e.status}`],
    extendedProps: {
      status: e.status,
      statusLabel: STATUS_LABEL[e.status],
      providerId: e.providerId,
      providerName: e.providerName,
      patientId: e.patientId,
      patientName: e.patientName,
      typeName: e.typeName,
      typeId: e.typeId,
      localDate: localParts(e.start, timeZone).date,
    },
  };
}
