import { dateTimeFormat } from "~/lib/format/intl";
import { useId } from "react";
import { useFetcher } from "react-router";
import { ErrorList } from "~/components/forms";
import { Button } from "~/components/ui/button";
import { Input, Select, Textarea } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";

import { PatientPicker } from "./patient-picker";

export type PatientOption = {
  id: string;
  firstName: string;
  lastName: string;
  dateOfBirth: string;
  email: string | null;
};
export type BookingDefaults = {
  start?: string;
  providerId?: string;
  appointmentTypeId?: string;
  siteId?: string;
  patient?: PatientOption | null;
};
export type SiteChoice = {
  sites: { id: string; name: string }[];
  rooms: { id: string; siteId: string; name: string }[];
};
type Reply = { status?: string; error?: Record<string, string[] | null> | null } | undefined;

function errorsOf(reply: Reply, field: string) {
  return reply?.error?.[field] ?? undefined;
}

/** "29 Mar 1979" from "1979-03-29" (dates of birth have no time zone). */
export function formatDob(d: string) {
  return dateTimeFormat("en-GB", { day: "numeric", month: "short", year: "numeric", timeZone: "UTC" }).format(
    new Date(`${d}T00:00:00Z`),
  );
}

/** The booking form, used in the calendar's dialog and on the booking page. */
export function BookingForm({
  providers,
  types,
  defaults,
  returnTo,
  onCancel,
  places = { sites: [], rooms: [] },
}: {
  places?: SiteChoice;
  providers: { id: string; name: string }[];
  types: { id: string; name: string; durationMinutes: number }[];
  defaults: BookingDefaults;
  returnTo?: string;
  onCancel?: () => void;
}) {
  const fetcher = useFetcher<Reply>();
  const reply = fetcher.data;
  const formErrors = errorsOf(reply, "");
  const id = useId();
  return (
    <fetcher.Form method="post" action="/schedule/book" className="space-y-4" aria-label="Book an appointment">
      {returnTo ? <input type="hidden" name="returnTo" value={returnTo} /> : null}
      {formErrors?.length ? (
        <Notice tone="error" title="Not booked">
          {formErrors.join(" ")}
        </Notice>
      ) : null}
      <PatientPicker
        key={defaults.patient?.id ?? "none"}
        initial={defaults.patient ?? null}
        errors={errorsOf(reply, "patientId")}
      />
      <div className="grid gap-4 sm:grid-cols-2">
        <div>
          <label htmlFor={`${id}-type`} className="mb-1 block text-sm font-semibold">
            Appointment type
          </label>
          <Select
            id={`${id}-type`}
            name="appointmentTypeId"
            defaultValue={defaults.appointmentTypeId ?? types[0]?.id}
            aria-invalid={errorsOf(reply, "appointmentTypeId") ? true : undefined}
          >
            {types.map((t) => (
              <option key={t.id} value={t.id}>
                {t.name} ({t.durationMinutes} min)
              </option>
            ))}
          </Select>
          <ErrorList errors={errorsOf(reply, "appointmentTypeId")} />
        </div>
        <div>
          <label htmlFor={`${id}-provider`} className="mb-1 block text-sm font-semibold">
            With
          </label>
          <Select
            id={`${id}-provider`}
            name="providerId"
            defaultValue={defaults.providerId ?? ""}
            aria-invalid={errorsOf(reply, "providerId") ? true : undefined}
          >
            <option value="">Choose…</option>
            {providers.map((p) => (
              <option key={p.id} value={p.id}>
                {p.name}
              </option>
            ))}
          </Select>
          <ErrorList errors={errorsOf(reply, "providerId")} />
        </div>
        {places.sites.length > 1 ? (
          <div>
            <label htmlFor={`${id}-site`} className="mb-1 block text-sm font-semibold">
              Site
            </label>
            <Select
              id={`${id}-site`}
              name="siteId"
              defaultValue={defaults.siteId ?? ""}
              aria-invalid={errorsOf(reply, "siteId") ? true : undefined}
            >
              <option value="">Where the provider works that day</option>
              {places.sites.map((s) => (
                <option key={s.id} value={s.id}>
                  {s.name}
                </option>
              ))}
            </Select>
            <ErrorList errors={errorsOf(reply, "siteId")} />
          </div>
        ) : null}
        {places.rooms.length ? (
          <div>
            <label htmlFor={`${id}-room`} className="mb-1 block text-sm font-semibold">
              Room
            </label>
            <Select
              id={`${id}-room`}
              name="roomId"
              defaultValue=""
              aria-invalid={errorsOf(reply, "roomId") ? true : undefined}
            >
              <option value="">The provider&apos;s room that day</option>
              {places.sites.map((s) => {
                const here = places.rooms.filter((r) => r.siteId === s.id);
                return here.length ? (
                  <optgroup key={s.id} label={s.name}>
                    {here.map((r) => (
                      <option key={r.id} value={r.id}>
                        {r.name}
                      </option>
                    ))}
                  </optgroup>
                ) : null;
              })}
            </Select>
            <ErrorList errors={errorsOf(reply, "roomId")} />
          </div>
        ) : null}
        <div>
          <label htmlFor={`${id}-start`} className="mb-1 block text-sm font-semibold">
            Starts
          </label>
          <Input
            id={`${id}-start`}
            type="datetime-local"
            name="start"
            step={300}
            defaultValue={defaults.start}
            aria-invalid={errorsOf(reply, "start") ? true : undefined}
            aria-describedby={`${id}-start-hint`}
          />
          <p id={`${id}-start-hint`} className="mt-1 text-sm text-muted">
            Practice time. The end follows from the type&apos;s length.
          </p>
          <ErrorList errors={errorsOf(reply, "start")} />
        </div>
        <div>
          <label htmlFor={`${id}-notes`} className="mb-1 block text-sm font-semibold">
            Note for the day list (optional)
          </label>
          <Textarea id={`${id}-notes`} name="notes" rows={2} />
          <ErrorList errors={errorsOf(reply, "notes")} />
        </div>
      </div>
      <div className="flex gap-3">
        <Button type="submit" pending={fetcher.state !== "idle"}>
          Book appointment
        </Button>
        {onCancel ? (
          <Button type="button" variant="secondary" onClick={onCancel}>
            Close
          </Button>
        ) : null}
      </div>
    </fetcher.Form>
  );
}
