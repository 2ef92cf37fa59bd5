import { Link } from "react-router";
import { HomeList, linkClass } from "./parts";
import { AppointmentStatus } from "~/components/schedule/status-ui";
import { Card } from "~/components/ui/card";
import { StatusBadge } from "~/components/ui/notice";
import type { OptometristHome } from "~/models/home/home.server";

/** An optometrist's own day: the next patient, their list, then exams to sign and letters and results to read. */
export function OptometristView({ home }: { home: OptometristHome }) {
  const { next, inChair, appointments, unsignedExams, replies, results } = home;
  return (
    <div className="grid gap-4 lg:grid-cols-2">
      <Card title="Next patient">
        <div data-testid="home-next">
          {next ? (
            <p className="flex flex-wrap items-center gap-x-3 gap-y-1">
              <span className="text-2xl font-bold tabular-nums">{next.time}</span>
              <Link to={`/patients/${next.patientId}`} className={`${linkClass} text-lg`}>
                {next.patientName}
                <span className="sr-only">: open the chart</span>
              </Link>
              <span className="text-muted">{next.typeName}</span>
              {next.late ? <StatusBadge tone="warning">Late</StatusBadge> : <AppointmentStatus status={next.status} />}
              <Link to={`/schedule/appointments/${next.id}`} className={`${linkClass} w-full text-sm`}>
                Open the appointment<span className="sr-only"> of {next.patientName}</span>
              </Link>
            </p>
          ) : (
            <p className="text-muted">Nobody else is booked with you today.</p>
          )}
          {inChair ? (
            <p className="mt-3 text-sm">
              In the chair now:{" "}
              <Link to={`/schedule/appointments/${inChair.id}`} className={linkClass}>
                {inChair.patientName}
              </Link>{" "}
              (booked {inChair.time})
            </p>
          ) : null}
        </div>
      </Card>
      <HomeList
        id="home-my-day"
        title="Your list today"
        total={appointments.length}
        rows={appointments}
        empty="No appointments with you today."
        more={{ to: "/schedule/day", label: "Open the day list" }}
      >
        {(a) => (
          <>
            <span className="w-12 font-semibold tabular-nums">{a.time}</span>
            <Link to={`/schedule/appointments/${a.id}`} className={linkClass}>
              {a.patientName}
              <span className="sr-only">: open the appointment</span>
            </Link>
            <span className="text-muted">{a.typeName}</span>
            {a.late ? <StatusBadge tone="warning">Late</StatusBadge> : <AppointmentStatus status={a.status} />}
          </>
        )}
      </HomeList>
      <HomeList
        id="home-unsigned"
        title="Your unsigned exams"
        total={unsignedExams.total}
        rows={unsignedExams.rows}
        empty="All your exams are signed."
        more={{ to: "/patients", label: "Patients" }}
      >
        {(e) => (
          <>
            <Link to={`/patients/${e.patientId}/exams/${e.id}`} className={linkClass}>
              {e.patientName}
              <span className="sr-only">: open the exam to finish and sign</span>
            </Link>
            <span className="text-muted">examined {e.examinedAt}</span>
            <StatusBadge tone="warning">Not signed</StatusBadge>
          </>
        )}
      </HomeList>
      <HomeList
        id="home-replies"
        title="Referral replies to read"
        total={replies.total}
        rows={replies.rows}
        empty="No unread replies to your referrals."
        more={{ to: "/referrals?status=replied", label: "Replied referrals" }}
      >
        {(r) => (
          <>
            <Link to={`/referrals/${r.referralId}`} className={linkClass}>
              {r.patientName}
              <span className="sr-only">: read the reply</span>
            </Link>
            <span className="text-muted">
              from {r.authorName}, {r.receivedAt}
            </span>
            <StatusBadge tone="info">Unread</StatusBadge>
          </>
        )}
      </HomeList>
      <HomeList
        id="home-results"
        title="Results to review"
        total={results.total}
        rows={results.rows}
        empty="No results are waiting: everything colleagues attached to your exams has been reviewed."
        more={{ to: "/patients", label: "Patients" }}
      >
        {(d) => (
          <>
            <Link to={d.href} className={linkClass}>
              {d.what}
              <span className="sr-only"> of {d.patientName}: open the exam to review it</span>
            </Link>
            <span>{d.patientName}</span>
            <span className="text-muted">
              {d.kind} added by {d.uploadedBy}, {d.at}
            </span>
          </>
        )}
      </HomeList>
    </div>
  );
}
