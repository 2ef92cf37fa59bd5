/**
 * The calendar's week as the server sends it: each provider's and appointment type's name once,
 * and one short row per appointment, instead of every event repeating names, labels and
 * FullCalendar's own fields. `expandCalendarFeed` turns it into FullCalendar's events in the
 * browser (and in tests), so what the calendar draws is unchanged.
 */
import { isMovable, STATUS_LABEL, type Status } from "./status";

/** One appointment: id, start and end (ISO 8601 with the zone's offset), status, provider, patient, patient's name, type. */
export type FeedRow = [
  id: string,
  start: string,
  end: string,
  status: Status,
  providerId: string,
  patientId: string,
  patientName: string,
  typeId: string,
];

export type CalendarFeed = {
  /** Provider id → name, for the providers in `events`. */
  providers: Record<string, string>;
  /** Appointment type id → name, for the types in `events`. */
  types: Record<string, string>;
  events: FeedRow[];
};

export type CalendarEventProps = {
  status: Status;
  statusLabel: string;
  providerId: string;
  providerName: string;
  patientId: string;
  patientName: string;
  typeName: string;
  typeId: string;
  /** The appointment's date on the practice's wall clock. */
  localDate: string;
};

/** One event in FullCalendar's shape (the same as the booking answer's `appointment`). */
export function calendarEvent(row: FeedRow, providerName: string, typeName: string) {
  const [id, start, end, status, providerId, patientId, patientName, typeId] = row;
  const extendedProps: CalendarEventProps = {
    status,
    statusLabel: STATUS_LABEL[status],
    providerId,
    providerName,
    patientId,
    patientName,
    typeName,
    typeId,
    localDate: start.slice(0, 10),
  };
  return {
    id,
    title: `${patientName} · ${typeName}`,
    start,
    end,
    editable: isMovable(status),
    classNames: [`appt-${status}`],
    extendedProps,
  };
}

export function expandCalendarFeed(feed: CalendarFeed) {
  return feed.events.map((row) => calendarEvent(row, feed.providers[row[4]] ?? "", feed.types[row[7]] ?? ""));
}
