import { dateTimeFormat } from "~/lib/format/intl";
import { Link } from "react-router";
import { STATUS_MARK } from "./calendar-marks";
import { Button, buttonClass } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { APPOINTMENT_STATUSES, STATUS_LABEL } from "~/lib/scheduling/status";
import type { TypeColour } from "~/lib/scheduling/type-colours";

export type Message = { tone: "success" | "error"; text: string; undo?: () => Promise<void> } | null;

/** What the colours and marks in the calendar mean: each type beside its swatch, each status's mark and word. */
export function CalendarLegend({
  types,
  colours,
}: {
  types: { id: string; name: string }[];
  colours: Record<string, TypeColour>;
}) {
  return (
    <section aria-labelledby="legend-title" className="mb-3 flex flex-wrap items-start gap-x-8 gap-y-2 text-sm">
      <h2 id="legend-title" className="sr-only">
        Key to the calendar
      </h2>
      <ul aria-label="Appointment types" className="flex flex-wrap gap-x-4 gap-y-1">
        {types.map((t) => (
          <li key={t.id} className="flex items-center gap-1.5">
            <span
              aria-hidden="true"
              className="inline-block h-4 w-6 rounded-sm border border-l-4"
              style={{ background: colours[t.id]?.fill, borderColor: colours[t.id]?.edge }}
            />
            {t.name}
          </li>
        ))}
      </ul>
      <ul aria-label="Statuses" className="flex flex-wrap gap-x-3 gap-y-1 text-muted">
        {APPOINTMENT_STATUSES.filter((s) => s !== "cancelled").map((s) => (
          <li key={s}>
            <span aria-hidden="true">{STATUS_MARK[s]}</span> {STATUS_LABEL[s]}
          </li>
        ))}
      </ul>
    </section>
  );
}

/**
 * The outcome of a drag (or a failed load), pinned to the bottom of the window so it is seen
 * however far the calendar is scrolled, with the move's undo beside it.
 */
export function CalendarNotice({ message, onClose }: { message: Message; onClose: () => void }) {
  return (
    <div
      role="status"
      aria-live="polite"
      className="fixed bottom-4 left-1/2 z-40 w-[min(40rem,calc(100vw-2rem))] -translate-x-1/2"
    >
      {message ? (
        <div className="flex items-start gap-3 rounded-lg bg-white shadow-xl" data-testid="calendar-notice">
          <div className="flex-1">
            <Notice tone={message.tone} title={message.text} />
          </div>
          <div className="flex shrink-0 gap-2 p-2">
            {message.undo ? (
              <Button type="button" variant="secondary" className="px-3 py-1" onClick={() => void message.undo?.()}>
                <span aria-hidden="true">↶</span> Undo move
              </Button>
            ) : null}
            <Button type="button" variant="ghost" className="px-3 py-1" onClick={onClose}>
              Close
            </Button>
          </div>
        </div>
      ) : null}
    </div>
  );
}

export type FreeTimesData = { providerId: string; providerName: string; gaps: { start: string; end: string }[] }[];

/**
 * Every clinician's free stretches of one day as buttons: the keyboard's way to book a time that
 * the calendar's grid offers only to the pointer.
 */
export function FreeTimes({
  date,
  free,
  dayLink,
  onBook,
}: {
  date: string;
  free: FreeTimesData;
  dayLink: (date: string, offset: number) => string;
  onBook: (start: string, providerId: string) => void;
}) {
  const day = dateTimeFormat("en-GB", { dateStyle: "full", timeZone: "UTC" }).format(new Date(`${date}T12:00:00Z`));
  const hhmm = (s: string) => s.slice(11, 16);
  return (
    <section aria-labelledby="free-title" className="mt-6 rounded-lg border border-line bg-white p-4 shadow-sm">
      <div className="mb-3 flex flex-wrap items-center gap-3">
        <h2 id="free-title" tabIndex={-1} className="text-lg font-semibold">
          Free times on {day}
        </h2>
        <Link className={buttonClass("ghost", "px-3 py-1")} to={dayLink(date, -1)}>
          ‹ Previous day
        </Link>
        <Link className={buttonClass("ghost", "px-3 py-1")} to={dayLink(date, 1)}>
          Next day ›
        </Link>
      </div>
      <div className="grid gap-4 md:grid-cols-2">
        {free.map((p) => (
          <div key={p.providerId}>
            <h3 className="mb-1 font-semibold">{p.providerName}</h3>
            {p.gaps.length === 0 ? (
              <p className="text-sm text-muted">No free time on this day.</p>
            ) : (
              <ul className="flex flex-wrap gap-2" aria-label={`Free times of ${p.providerName}`}>
                {p.gaps.map((g) => (
                  <li key={g.start}>
                    <Button
                      type="button"
                      variant="secondary"
                      className="px-3 py-1"
                      onClick={() => onBook(g.start, p.providerId)}
                    >
                      Book from {hhmm(g.start)} <span className="font-normal">(free until {hhmm(g.end)})</span>
                      <span className="sr-only"> with {p.providerName}</span>
                    </Button>
                  </li>
                ))}
              </ul>
            )}
          </div>
        ))}
      </div>
    </section>
  );
}
