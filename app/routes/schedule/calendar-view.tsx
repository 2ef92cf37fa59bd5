/**
 * The FullCalendar view of the schedule. Loaded only in the browser (FullCalendar renders after
 * hydration). Runs in the practice's named time zone through the Luxon 3 plugin, so a receptionist
 * whose computer is set elsewhere still sees the practice's wall-clock times.
 */
import type { EventApi, EventContentArg } from "@fullcalendar/core";
import dayGridPlugin from "@fullcalendar/daygrid";
import interactionPlugin from "@fullcalendar/interaction";
import luxon3Plugin from "@fullcalendar/luxon3";
import FullCalendar from "@fullcalendar/react";
import timeGridPlugin from "@fullcalendar/timegrid";
import { useMemo, useRef } from "react";

export type CalendarProps = {
  timeZone: string;
  provider: string;
  /** A site id or "all". */
  site: string;
  initialDate?: string;
  initialView: "timeGridDay" | "timeGridWeek" | "dayGridMonth";
  businessHours: { daysOfWeek: number[]; startTime: string; endTime: string }[];
  onSelectSlot: (startLocal: string) => void;
  onOpen: (id: string) => void;
  onMessage: (tone: "success" | "error", text: string) => void;
  onViewChange?: (view: string, date: string) => void;
};

const STATUS_MARK: Record<string, string> = {
  booked: "○",
  confirmed: "◎",
  arrived: "●",
  in_exam: "▶",
  completed: "✓",
  no_show: "✕",
  cancelled: "✕",
};

/** "2027-03-29T09:00" from a FullCalendar date string in the named zone. */
function wallTime(str: string) {
  return str.slice(0, 16);
}

function EventBody({ arg }: { arg: EventContentArg }) {
  const p = arg.event.extendedProps as {
    statusLabel: string;
    status: string;
    patientName: string;
    typeName: string;
    providerName: string;
  };
  return (
    <div className="overflow-hidden px-1 text-xs leading-tight">
      <div className="font-semibold">
        {arg.timeText} · <span aria-hidden="true">{STATUS_MARK[p.status]}</span> {p.statusLabel}
      </div>
      <div className="font-semibold">{p.patientName}</div>
      <div>
        {p.typeName} · {p.providerName}
      </div>
    </div>
  );
}

async function patch(event: EventApi) {
  const res = await fetch(`/api/appointments/${event.id}`, {
    method: "PATCH",
    headers: { "content-type": "application/json", accept: "application/json" },
    body: JSON.stringify({ start: event.startStr, end: event.endStr }),
  });
  const body = (await res.json().catch(() => ({}))) as { error?: string; appointment?: { start: string } };
  return { ok: res.ok, body };
}

export default function CalendarView(props: CalendarProps) {
  const ref = useRef<FullCalendar>(null);
  const { provider, site, onMessage } = props;
  const source = useMemo(
    () => ({
      url: "/api/appointments",
      extraParams: { provider, site },
      failure: () => onMessage("error", "The appointments could not be loaded. Check the connection and reload."),
    }),
    [provider, site, onMessage],
  );
  const change = async (info: { event: EventApi; revert: () => void }, verb: string) => {
    const { ok, body } = await patch(info.event);
    if (!ok) {
      info.revert();
      props.onMessage("error", `Not ${verb}: ${body.error ?? "the server refused the change."}`);
    } else {
      const p = info.event.extendedProps as { patientName: string };
      props.onMessage(
        "success",
        `${p.patientName} ${verb} to ${new Intl.DateTimeFormat("en-GB", { timeZone: props.timeZone, weekday: "short", day: "numeric", month: "short", hour: "2-digit", minute: "2-digit", hourCycle: "h23" }).format(new Date(body.appointment?.start ?? info.event.startStr))}.`,
      );
      ref.current?.getApi().refetchEvents();
    }
  };
  return (
    <FullCalendar
      ref={ref}
      plugins={[luxon3Plugin, dayGridPlugin, timeGridPlugin, interactionPlugin]}
      timeZone={props.timeZone}
      locale="en-gb"
      firstDay={1}
      initialView={props.initialView}
      initialDate={props.initialDate}
      headerToolbar={{ left: "prev,next today", center: "title", right: "timeGridDay,timeGridWeek,dayGridMonth" }}
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
      height="auto"
      expandRows
      businessHours={props.businessHours.length ? props.businessHours : false}
      selectable
      selectMirror
      editable
      eventDurationEditable
      eventStartEditable
      events={source}
      eventColor="#0d5c62"
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
        const p = info.event.extendedProps as {
          statusLabel: string;
          patientName: string;
          typeName: string;
          providerName: string;
        };
        info.el.setAttribute(
          "aria-label",
          `${p.patientName}, ${p.typeName} with ${p.providerName}, ${info.timeText}, ${p.statusLabel}`,
        );
        info.el.setAttribute("data-appointment-id", info.event.id);
      }}
    />
  );
}
