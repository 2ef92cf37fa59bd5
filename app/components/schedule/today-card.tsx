import { Link } from "react-router";
import { StatusCommands } from "./status-commands";
import { AppointmentStatus } from "./status-ui";
import { Card } from "~/components/ui/card";
import type { Status } from "~/lib/scheduling/status";

type Today = {
  own: boolean;
  date: string;
  role: string;
  appointments: {
    id: string;
    time: string;
    patientName: string;
    typeName: string;
    providerName: string;
    status: Status;
  }[];
};

/** The staff home's view of today's diary, with the way into the live day list. */
export function TodayCard({ today }: { today: Today }) {
  const shown = today.appointments.slice(0, 8);
  return (
    <Card
      title={today.own ? "Your appointments today" : "Appointments today"}
      className="mb-6"
      actions={
        <Link to="/schedule/day" className="font-semibold text-accent-700 underline underline-offset-4">
          Open the day list
        </Link>
      }
    >
      {shown.length === 0 ? (
        <p className="text-muted">No appointments today.</p>
      ) : (
        <ul className="divide-y divide-line">
          {shown.map((a) => (
            <li
              key={a.id}
              data-appointment-id={a.id}
              className="flex flex-wrap items-center gap-x-4 gap-y-1 py-2 text-sm"
            >
              <span className="w-12 font-semibold">{a.time}</span>
              <Link
                to={`/schedule/appointments/${a.id}`}
                className="font-semibold text-accent-700 underline underline-offset-4"
              >
                {a.patientName}
                <span className="sr-only">: open the appointment</span>
              </Link>
              <span className="text-muted">
                {a.typeName}
                {today.own ? "" : ` · ${a.providerName}`}
              </span>
              <AppointmentStatus status={a.status} />
              {a.status === "booked" || a.status === "confirmed" ? (
                <span className="ml-auto">
                  <StatusCommands
                    id={a.id}
                    status={a.status}
                    role={today.role}
                    name={a.patientName}
                    date={today.date}
                    today={today.date}
                    only={["arrived"]}
                  />
                </span>
              ) : null}
            </li>
          ))}
        </ul>
      )}
      {today.appointments.length > shown.length ? (
        <p className="mt-2 text-sm text-muted">and {today.appointments.length - shown.length} more in the day list.</p>
      ) : null}
    </Card>
  );
}
