import { Link } from "react-router";
import { HomeList, linkClass } from "./parts";
import { StatusCommands } from "~/components/schedule/status-commands";
import { AppointmentStatus } from "~/components/schedule/status-ui";
import { StatusBadge } from "~/components/ui/notice";
import { formatMoney } from "~/lib/format";
import type { FrontDeskHome } from "~/models/home/home.server";

const DESK: string = "receptionist";

/** The front desk's day: arrivals and the waiting room first, then money, requests, collections and failed e-mails. */
export function FrontDeskView({ home, currency }: { home: FrontDeskHome; currency: string }) {
  const { waiting, toArrive, balancesDue, moveRequests, readyToCollect, failedMessages } = home;
  return (
    <div className="grid gap-4 lg:grid-cols-2">
      <HomeList
        id="home-waiting"
        title="Waiting"
        total={waiting.length}
        rows={waiting}
        empty="Nobody is waiting."
        more={{ to: "/schedule/day", label: "Open the day list" }}
      >
        {(a) => (
          <>
            <Link to={`/schedule/appointments/${a.id}`} className={linkClass}>
              {a.patientName}
              <span className="sr-only">: open the appointment</span>
            </Link>
            <span className="text-muted">
              booked {a.time} with {a.providerName}
              {a.since ? `, arrived ${a.since}` : ""}
            </span>
            <AppointmentStatus status={a.status} />
          </>
        )}
      </HomeList>
      <HomeList
        id="home-arrivals"
        title="Still to arrive today"
        total={toArrive.length}
        rows={toArrive.slice(0, 8)}
        empty={home.dayTotal ? "Everyone booked today has arrived." : "No appointments today."}
        more={{ to: "/schedule/day", label: "Open the day list" }}
      >
        {(a) => (
          <>
            <span className="w-12 font-semibold tabular-nums">{a.time}</span>
            <Link to={`/schedule/appointments/${a.id}`} className={linkClass}>
              {a.patientName}
              <span className="sr-only">: open the appointment</span>
            </Link>
            <span className="text-muted">
              {a.typeName} · {a.providerName}
            </span>
            {a.late ? <StatusBadge tone="warning">Late</StatusBadge> : <AppointmentStatus status={a.status} />}
            <span className="ml-auto">
              <StatusCommands
                id={a.id}
                status={a.status}
                role={DESK}
                name={a.patientName}
                date={home.today}
                today={home.today}
                only={["arrived"]}
              />
            </span>
          </>
        )}
      </HomeList>
      <HomeList
        id="home-balances"
        title="Unpaid balances due today"
        total={balancesDue.total}
        rows={balancesDue.rows}
        empty="No unpaid balance is due today."
        more={{ to: "/billing/balances", label: "All balances" }}
      >
        {(b) => (
          <>
            <Link to={`/billing/invoices/${b.id}`} className={linkClass}>
              {b.label}
              <span className="sr-only"> for {b.patientName}</span>
            </Link>
            <span>{b.patientName}</span>
            <span className="ml-auto font-semibold tabular-nums">{formatMoney(b.balanceMinor, currency)} due</span>
          </>
        )}
      </HomeList>
      <HomeList
        id="home-move-requests"
        title="Requests to move a visit"
        total={moveRequests.total}
        rows={moveRequests.rows}
        empty="No patient has asked to move a visit."
        more={{ to: "/schedule/day", label: "Settle them in the day list" }}
      >
        {(r) => (
          <>
            <Link to={`/schedule/appointments/${r.appointmentId}`} className={linkClass}>
              {r.patientName}
              <span className="sr-only">: open the visit to move</span>
            </Link>
            <span className="text-muted">visit {r.visitAt}</span>
            <span className="w-full text-muted">“{r.message}”</span>
          </>
        )}
      </HomeList>
      <HomeList
        id="home-ready"
        title="Orders ready to collect"
        total={readyToCollect.total}
        rows={readyToCollect.rows}
        empty="No order is waiting to be collected."
        more={{ to: "/orders?state=ready_to_collect", label: "All orders ready" }}
      >
        {(o) => (
          <>
            <Link to={`/orders/${o.id}`} className={linkClass}>
              {o.label}
              <span className="sr-only"> for {o.patientName}</span>
            </Link>
            <span>{o.patientName}</span>
            <span className="text-muted">
              {o.kind}, ready since {o.readySince}
            </span>
          </>
        )}
      </HomeList>
      <HomeList
        id="home-failed"
        title="E-mails that failed"
        total={failedMessages.total}
        rows={failedMessages.rows}
        empty="No e-mail has failed."
        more={{ to: "/schedule/messages?status=failed", label: "Failed messages" }}
      >
        {(m) => (
          <>
            <StatusBadge tone="error">Failed</StatusBadge>
            <Link to={m.href} className={linkClass}>
              {m.what}
              <span className="sr-only"> to {m.patientName}</span>
            </Link>
            <span>{m.patientName}</span>
            <span className="text-muted">{m.at}</span>
            {m.error ? <span className="w-full text-muted">{m.error}</span> : null}
          </>
        )}
      </HomeList>
    </div>
  );
}
