/**
 * The patient's referrals for the chart: status, recipient, dates and the recipient's replies.
 * Data from `referralsForChart(patientId, { clinical })` in ./referrals.server (reason and reply
 * text are null for roles that may not read clinical notes).
 */
import { Link } from "react-router";
import { Card } from "~/components/ui/card";
import { StatusBadge } from "~/components/ui/notice";
import { STATUS_LABEL, STATUS_TONE, URGENCY_LABEL, type DisplayStatus, type Urgency } from "~/lib/referrals";
import { formatDate } from "~/lib/format";

export type ChartReferral = {
  id: string;
  reference: string;
  status: DisplayStatus;
  urgency: Urgency;
  recipient: string | null;
  createdAt: string;
  sentAt: string | null;
  appointmentOn: string | null;
  reason: string | null;
  replies: { id: string; authorName: string; body: string | null; fileName: string | null; createdAt: string }[];
};

export function ChartReferrals({ referrals }: { referrals: ChartReferral[] }) {
  return (
    <Card title="Referrals">
      {referrals.length === 0 ? (
        <p className="text-sm text-muted">No referrals.</p>
      ) : (
        <ul className="space-y-4">
          {referrals.map((r) => (
            <li key={r.id} className="rounded-md border border-line p-3">
              <div className="flex flex-wrap items-center gap-2">
                <Link to={`/referrals/${r.id}`} className="font-semibold text-accent-700 underline underline-offset-4">
                  {r.reference}
                </Link>
                <StatusBadge tone={STATUS_TONE[r.status]}>{STATUS_LABEL[r.status]}</StatusBadge>
                <span className="text-sm text-muted">
                  {URGENCY_LABEL[r.urgency]}
                  {r.recipient ? ` · to ${r.recipient}` : ""}
                  {r.sentAt ? ` · sent ${formatDate(r.sentAt)}` : ""}
                  {r.appointmentOn ? ` · appointment ${r.appointmentOn}` : ""}
                </span>
              </div>
              {r.reason ? <p className="mt-1 text-sm">{r.reason}</p> : null}
              {r.replies.map((x) => (
                <div key={x.id} className="mt-2 border-l-2 border-accent-600 pl-3 text-sm">
                  <p className="text-muted">
                    Reply from {x.authorName} · {formatDate(x.createdAt)}
                  </p>
                  {x.body ? <p className="whitespace-pre-wrap">{x.body}</p> : null}
                  {x.fileName ? <p>Consult letter: {x.fileName}</p> : null}
                </div>
              ))}
            </li>
          ))}
        </ul>
      )}
    </Card>
  );
}
