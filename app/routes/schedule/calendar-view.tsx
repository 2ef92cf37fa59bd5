/**
 * The FullCalendar view of the schedule. Loaded only in the browser (FullCalendar renders after
 * hydration). Runs in the practice's named time zone through the Luxon 3 plugin, so a receptionist
 * whose computer is set elsewhere still sees the practice's wall-clock times.
 */
import { dateTimeFormat } from "~/lib/format/intl";
import type { EventApi, EventContentArg, EventInput } from "@fullcalendar/core";
import dayGridPlugin from "@fullcalendar/daygrid";
import interactionPlugin from "@fullcalendar/interaction";
import luxon3Plugin from "@fullcalendar/luxon3";
import FullCalendar from "@fullcalendar/react";
import timeGridPlugin from "@fullcalendar/timegrid";
import { useMemo, useRef } from "react";
import { STATUS_MARK } from "./calendar-marks";
import { expandCalendarFeed, type CalendarEventProps, type CalendarFeed } from "~/lib/scheduling/calendar-feed";
import type { TypeColour } from "~/lib/scheduling/type-colours";

export type CalendarMessage = (tone: "success" | "error", text: string, undo?: () => Promise<void>) => void;

export type CalendarProps = {
  timeZone: string;
  provider: string;
  /** A site id or "all". */
  site: string;
  initialDate?: string;
  initialView: "timeGridDay" | "timeGridWeek" | "dayGridMonth";
  businessHours: { daysOfWeek: number[]; startTime: string; endTime: string }[];
  colours: Record<string, TypeColour>;
  /** One clinician's column of the side-by-side day: no toolbar or day heading of its own. */
  column?: boolean;
  onSelectSlot: (startLocal: string) => void;
  onOpen: (id: string) => void;
  onMessage: CalendarMessage;
  onViewChange?: (view: string, date: string) => void;
};

type Props = CalendarEventProps;

const OTHER_TYPE: TypeColour = { fill: "#ececec", edge: "#4a4a4a", ink: "#1d1d1d" };

/** "2027-03-29T09:00" from a FullCalendar date string in the named zone. */
function wallTime(str: string) {
  return str.slice(0, 16);
}

/** Everything an event says, for its accessible name and its tooltip. */
function fullText(p: Props, timeText: string) {
  return `${p.patientName}, ${timeText}, ${p.typeName} with ${p.providerName}, ${p.statusLabel}`;
}

/** Patient first, then time and type, then the status as mark and word; each line cut with an ellipsis. */
function EventBody({ arg }: { arg: EventContentArg }) {
  const p = arg.event.extendedProps as Props;
  const status = (
    <span className="whitespace-nowrap">
      <span aria-hidden="true">{STATUS_MARK[p.status]}</span> {p.statusLabel}
    </span>
  );
  if (arg.view.type === "dayGridMonth")
    return (
      <div className="appt-line truncate px-1 text-xs">
        <span className="font-semibold">{p.patientName}</span> · {arg.timeText} · {p.statusLabel}
      </div>
    );
  const minutes = ((arg.event.end?.getTime() ?? 0) - (arg.event.start?.getTime() ?? 0)) / 60_000;
  return (
    <div className="appt-body flex h-full flex-col overflow-hidden px-1 text-xs leading-3.5">
      <div className="appt-name truncate font-bold">{p.patientName}</div>
      {minutes < 30 ? (
        <div className="truncate">
          {arg.timeText} · {p.typeName} · {status}
        </div>
      ) : (
        <>
          <div className="truncate">
            {arg.timeText} · {p.typeName}
          </div>
          <div className="truncate">{status}</div>
        </>
      )}
    </div>
  );
}

async function patch(id: string, body: Record<string, string>) {
  const res = await fetch(`/api/appointments/${id}`, {
    method: "PATCH",
    headers: { "content-type": "application/json", accept: "application/json" },
    body: JSON.stringify(body),
  });
  const json = (await res.json().catch(() => ({}))) as { error?: string; appointment?: { start: string } };
  return { ok: res.ok, body: json };
}

export default function CalendarView(props: CalendarProps) {
  const ref = useRef<FullCalendar>(null);
  const { provider, site, onMessage, colours, timeZone } = props;
  const source = useMemo(
    () => ({
      url: "/api/appointments",
      extraParams: { provider, site },
      // The server sends names once and short rows (a CalendarFeed); FullCalendar gets full events.
      success: (feed: unknown) => expandCalendarFeed(feed as CalendarFeed),
      failure: () => onMessage("error", "The appointments could not be loaded. Check the connection and reload."),
    }),
    [provider, site, onMessage],
  );
  const when = (iso: string) =>
    dateTimeFormat("en-GB", {
      timeZone,
      weekday: "short",
      day: "numeric",
      month: "short",
      hour: "2-digit",
      minute: "2-digit",
      hourCycle: "h23",
    }).format(new Date(iso));
  const change = async (info: { event: EventApi; oldEvent: EventApi; revert: () => void }, verb: string) => {
    const { ok, body } = await patch(info.event.id, { start: info.event.startStr, end: info.event.endStr });
    if (!ok) {
      info.revert();
      onMessage("error", `Not ${verb}: ${body.error ?? "the server refused the change."}`);
      return;
    }
    const name = (info.event.extendedProps as Props).patientName;
    const before = { id: info.event.id, start: info.oldEvent.startStr, end: info.oldEvent.endStr };
    const undo = async () => {
      const back = await patch(before.id, { start: before.start, end: before.end });
      if (back.ok) onMessage("success", `Undone: ${name} is back at ${when(before.start)}.`);
      else onMessage("error", `Not undone: ${back.body.error ?? "the server refused the change."}`);
      ref.current?.getApi().refetchEvents();
    };
    onMessage(
      "success",
      `${name} ${verb} to ${when(body.appointment?.start ?? info.event.startStr)} (was ${when(before.start)}).`,
      undo,
    );
    ref.current?.getApi().refetchEvents();
  };
  return (
    <FullCalendar
      ref={ref}
      plugins={[luxon3Plugin, dayGridPlugin, timeGridPlugin, interactionPlugin]}
      timeZone={timeZone}
      locale="en-gb"
      firstDay={1}
      initialView={props.initialView}
      initialDate={props.initialDate}
      headerToolbar={
        props.column
          ? false
          : { left: "prev,next today", center: "title", right: "timeGridDay,timeGridWeek,dayGridMonth" }
      }
      dayHeaders={!props.column}
      buttonIcons={false}
      buttonText={{ today: "Today", day: "Day", week: "Week", month: "Month", prev: "‹ Previous", next: "Next ›" }}
      slotMinTime="08:00:00"
      slotMaxTime="19:00:00"
      slotDuration="00:15:00"
      slotLabelInterval="01:00"
      slotLabelFormat={{ hour: "2-digit", minute: "2-digit", hourCycle: "h23" }}
      eventTimeFormat={{ hour: "2-digit", minute: "2-digit", hourCycle: "h23" }}
      allDaySlot={false}
      nowIndicator
      slotEventOverlap={false}
      height="auto"
      expandRows
      businessHours={props.businessHours.length ? props.businessHours : false}
      selectable
      selectMirror
      editable
      eventDurationEditable
      eventStartEditable
      events={source}
      eventDataTransform={(input: EventInput) => {
        const c = colours[(input.extendedProps as Props | undefined)?.typeId ?? ""] ?? OTHER_TYPE;
        return { ...input, backgroundColor: c.fill, borderColor: c.edge, textColor: c.ink };
      }}
      eventContent={(arg) => <EventBody arg={arg} />}
      select={(info) => {
        info.view.calendar.unselect();
        props.onSelectSlot(wallTime(info.startStr.length > 10 ? info.startStr : `${info.startStr}T09:00`));
      }}
      eventClick={(info) => {
        info.jsEvent.preventDefault();
        props.onOpen(info.event.id);
      }}
      eventDrop={(info) => change(info, "moved")}
      eventResize={(info) => change(info, "resized")}
      datesSet={(arg) => props.onViewChange?.(arg.view.type, arg.startStr.slice(0, 10))}
      eventDidMount={(info) => {
        const text = fullText(info.event.extendedProps as Props, info.timeText);
        info.el.setAttribute("aria-label", text);
        info.el.setAttribute("title", text);
        info.el.setAttribute("data-appointment-id", info.event.id);
      }}
    />
  );
}
