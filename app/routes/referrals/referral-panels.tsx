/** The referral page's panels: status and due date, e-mail delivery, and the timeline of events. */
import { Form, useNavigation } from "react-router";
import type { Route } from "./+types/referral";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { StatusBadge } from "~/components/ui/notice";
import { STATUS_LABEL, STATUS_TONE } from "~/lib/referrals";
import { formatDate } from "~/lib/format";

export type Summary = Route.ComponentProps["loaderData"]["summary"];

export function StatusPanel({ s, clinical }: { s: Summary; clinical: boolean }) {
  const navigation = useNavigation();
  return (
    <Card title="Status">
      <dl className="grid gap-x-6 gap-y-2 text-sm sm:grid-cols-[10rem_1fr]">
        <dt className="text-muted">Status</dt>
        <dd>
          <StatusBadge tone={STATUS_TONE[s.status]}>{STATUS_LABEL[s.status]}</StatusBadge>
        </dd>
        <dt className="text-muted">Urgency</dt>
        <dd>
          {s.urgency}
          {s.proposedUrgency && s.proposedUrgency !== s.urgency ? (
            <span className="block text-muted">
              Triage proposed {s.proposedUrgency.toLowerCase()}
              {s.urgencyOverrideReason ? `; reason for the change: ${s.urgencyOverrideReason}` : ""}
            </span>
          ) : null}
        </dd>
        <dt className="text-muted">Recipient</dt>
        <dd>
          {s.recipient
            ? `${s.recipient.name}${s.recipient.clinic ? `, ${s.recipient.clinic}` : ""}${s.recipient.email ? ` <${s.recipient.email}>` : ""}`
            : "Not chosen"}
        </dd>
        <dt className="text-muted">Written by</dt>
        <dd>{s.author}</dd>
        <dt className="text-muted">Sent</dt>
        <dd>{s.sentAt ?? "Not yet"}</dd>
        <dt className="text-muted">To be seen by</dt>
        <dd>{s.dueOn ?? "—"}</dd>
        <dt className="text-muted">Acknowledged</dt>
        <dd>
          {s.acknowledgedAt ? `${s.acknowledgedAt}${s.acknowledgedBy ? ` by ${s.acknowledgedBy}` : ""}` : "Not yet"}
        </dd>
        <dt className="text-muted">Appointment</dt>
        <dd>{s.appointmentOn ?? "Not given"}</dd>
        {s.link ? (
          <>
            <dt className="text-muted">Recipient's link</dt>
            <dd>
              Works until {s.link.expiresOn}
              {s.link.lastOpened ? ` · last opened ${s.link.lastOpened}` : " · not opened yet"}
            </dd>
          </>
        ) : null}
      </dl>
      <div className="mt-4 flex flex-wrap gap-2">
        {s.canChase ? (
          <Form method="post">
            <Button type="submit" name="intent" value="chase" pending={navigation.formData?.get("intent") === "chase"}>
              Send a reminder to the recipient
            </Button>
          </Form>
        ) : null}
        {clinical && s.stored !== "draft" && s.stored !== "withdrawn" && s.stored !== "replied" ? (
          <Form
            method="post"
            onSubmit={(e) =>
              !confirm("Withdraw this referral? The recipient's link stops working.") ? e.preventDefault() : undefined
            }
          >
            <Button type="submit" name="intent" value="withdraw" variant="danger">
              Withdraw referral
            </Button>
          </Form>
        ) : null}
      </div>
    </Card>
  );
}

export function Delivery({ s }: { s: Summary }) {
  if (!s.messages.length) return null;
  return (
    <Card title="E-mails">
      <ul className="divide-y divide-line text-sm">
        {s.messages.map((m) => (
          <li key={m.id} className="flex flex-wrap items-start justify-between gap-3 py-3">
            <div>
              <p className="font-semibold">
                {m.kind} to {m.to}
              </p>
              <p className="text-muted">
                {m.at} · {m.attempts} attempt{m.attempts === 1 ? "" : "s"}
              </p>
              {m.error && m.status !== "sent" ? <p className="text-red-800">Last error: {m.error}</p> : null}
            </div>
            <div className="flex items-center gap-2">
              {m.status === "sent" ? (
                <StatusBadge tone="success">Sent</StatusBadge>
              ) : m.status === "queued" ? (
                <StatusBadge tone="warning">Queued, retrying</StatusBadge>
              ) : (
                <StatusBadge tone="error">Failed</StatusBadge>
              )}
              {m.status === "failed" ? (
                <Form method="post">
                  <input type="hidden" name="messageId" value={m.id} />
                  <Button type="submit" name="intent" value="retry" variant="secondary" className="px-3 py-1">
                    Try again
                  </Button>
                </Form>
              ) : null}
            </div>
          </li>
        ))}
      </ul>
    </Card>
  );
}

export function Timeline({ s }: { s: Summary }) {
  return (
    <Card title="History">
      <ol className="space-y-2 text-sm">
        {s.events.map((e, i) => (
          <li key={i}>
            <span className="font-semibold">{e.label}</span>
            {e.date ? ` (${formatDate(e.date)})` : ""} · {e.at}
            {e.by ? ` · ${e.by}` : ""}
          </li>
        ))}
      </ol>
    </Card>
  );
}
