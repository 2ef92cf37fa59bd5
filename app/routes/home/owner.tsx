import { Figure } from "./parts";
import { formatMoney } from "~/lib/format";
import type { OwnerHome, Share } from "~/models/home/home.server";

const pct = (s: Share) => (s.percent === null ? "No data yet" : `${s.percent}%`);
const plural = (n: number, one: string, many: string) => `${n.toLocaleString("en-GB")} ${n === 1 ? one : many}`;
const dayWords = (d: number | null) =>
  d === null ? "not yet known" : `${d.toLocaleString("en-GB")} ${d === 1 ? "day" : "days"}`;

/** The owner's figures, each with what it counts and the page behind it. */
export function OwnerView({ home }: { home: OwnerHome }) {
  const { takings, visits, recalls, referrals, examsToOrders, windowDays, currency, today, month } = home;
  return (
    <div className="grid gap-4 md:grid-cols-2 xl:grid-cols-3">
      <Figure
        id="home-takings-day"
        title="Takings today"
        value={formatMoney(takings.day.netMinor, currency)}
        detail={`Net of refunds, from ${plural(takings.day.payments, "payment", "payments")}.`}
        link={{ to: `/billing/takings?day=${today}`, label: "Today's takings" }}
      />
      <Figure
        id="home-takings-month"
        title="Takings this month"
        value={formatMoney(takings.month.netMinor, currency)}
        detail={`Net of refunds, from ${plural(takings.month.payments, "payment", "payments")} so far.`}
        link={{ to: `/billing/takings?month=${month}`, label: "This month's takings" }}
      />
      <Figure
        id="home-visits"
        title="Visits kept this month"
        value={pct(visits.keptShare)}
        detail={`${plural(visits.kept, "visit", "visits")} kept, ${plural(visits.noShow, "no-show", "no-shows")} (and ${visits.cancelled.toLocaleString("en-GB")} cancelled) so far this month.`}
        link={{ to: "/schedule", label: "Open the calendar" }}
      />
      <Figure
        id="home-recalls"
        title="Recall response"
        value={pct(recalls)}
        detail={`${plural(recalls.part, "patient", "patients")} of ${recalls.whole.toLocaleString("en-GB")} sent a recall in the last ${windowDays} days booked a visit after it.`}
        link={{ to: "/schedule/recalls", label: "Recalls" }}
      />
      <Figure
        id="home-referrals"
        title="Referral turnaround"
        value={
          referrals.medianDaysToReply === null ? "No replies yet" : `${dayWords(referrals.medianDaysToReply)} to reply`
        }
        detail={`Median over ${plural(referrals.sent, "letter", "letters")} sent in the last ${windowDays} days: acknowledged in ${dayWords(referrals.medianDaysToAcknowledge)} (${referrals.acknowledged} acknowledged), replied in ${dayWords(referrals.medianDaysToReply)} (${referrals.replied} replied).`}
        link={{ to: "/referrals?status=overdue", label: "Overdue referrals" }}
      />
      <Figure
        id="home-exam-orders"
        title="Exams that led to an order"
        value={pct(examsToOrders)}
        detail={`${plural(examsToOrders.part, "exam", "exams")} of ${examsToOrders.whole.toLocaleString("en-GB")} signed in the last ${windowDays} days led to an optical order.`}
        link={{ to: "/orders/reports", label: "Order reports" }}
      />
    </div>
  );
}
