import { parseWithZod } from "@conform-to/zod/v4";
import { and, asc, desc, eq, isNull } from "drizzle-orm";
import { data, Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/referral";
import { draftValuesOf, LetterForm, letterSchema } from "./letter-form";
import {
  chaseReferral,
  discardDraft,
  formatDate,
  loadReferral,
  practice,
  ReferralError,
  referenceOf,
  retryMessage,
  sendReferral,
  triageProposal,
  updateDraft,
  withdrawReferral,
} from "~/models/referrals/referrals.server";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { PageHeader } from "~/components/page-header";
import { Button, buttonClass } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Notice, StatusBadge } from "~/components/ui/notice";
import {
  documents,
  referralEvents,
  referralLinks,
  referralMessages,
  referralRecipients,
  referralReplies,
  users,
} from "~/db/schema";
import {
  canChase,
  displayStatus,
  dueBy,
  findingKey,
  localDate,
  promptValue,
  STATUS_LABEL,
  STATUS_TONE,
  timeFramesOf,
  URGENCY_LABEL,
} from "~/lib/referrals";
import { audit } from "~/utils/audit.server";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { db } from "~/utils/db.server";
import { redirectWithToast } from "~/utils/toast.server";

const EVENT_LABEL: Record<string, string> = {
  drafted: "Draft started",
  queued: "Queued for sending",
  sent: "Letter e-mailed",
  acknowledged: "Receipt acknowledged",
  appointment_set: "Appointment date given",
  replied: "Reply received",
  chased: "Reminder sent to the recipient",
  withdrawn: "Referral withdrawn",
};
const MESSAGE_LABEL = {
  letter: "Referral letter",
  chase: "Reminder",
  reply_notice: "Reply notice to the optometrist",
} as const;

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, STAFF_ROLES);
  const r = await loadReferral(params.referralId);
  const p = await practice();
  const clinical = user.role !== "receptionist";
  const now = new Date();
  const [messages, events, replies, links] = await Promise.all([
    db
      .select()
      .from(referralMessages)
      .where(eq(referralMessages.referralId, r.referral.id))
      .orderBy(desc(referralMessages.createdAt)),
    db
      .select({
        kind: referralEvents.kind,
        at: referralEvents.at,
        actorName: referralEvents.actorName,
        userName: users.name,
        detail: referralEvents.detail,
      })
      .from(referralEvents)
      .leftJoin(users, eq(users.id, referralEvents.actorUserId))
      .where(eq(referralEvents.referralId, r.referral.id))
      .orderBy(asc(referralEvents.at), asc(referralEvents.id)),
    clinical
      ? db
          .select({
            id: referralReplies.id,
            authorName: referralReplies.authorName,
            body: referralReplies.body,
            fileName: referralReplies.fileName,
            createdAt: referralReplies.createdAt,
            readAt: referralReplies.readAt,
          })
          .from(referralReplies)
          .where(eq(referralReplies.referralId, r.referral.id))
          .orderBy(asc(referralReplies.createdAt))
      : Promise.resolve([]),
    db
      .select()
      .from(referralLinks)
      .where(and(eq(referralLinks.referralId, r.referral.id), isNull(referralLinks.revokedAt)))
      .orderBy(desc(referralLinks.createdAt))
      .limit(1),
  ]);
  const when = (d: Date) =>
    formatDate(d, p.timeZone, { day: "numeric", month: "short", year: "numeric", hour: "2-digit", minute: "2-digit" });
  const status = displayStatus(r.referral, now, p.timeZone);
  const due = dueBy(r.referral);
  const summary = {
    id: r.referral.id,
    reference: referenceOf(r.referral.id),
    stored: r.referral.status,
    status,
    urgency: URGENCY_LABEL[r.referral.urgency],
    proposedUrgency: r.referral.proposedUrgency ? URGENCY_LABEL[r.referral.proposedUrgency] : null,
    urgencyOverrideReason: clinical ? r.referral.urgencyOverrideReason : null,
    patient: {
      id: r.patient.id,
      name: `${r.patient.firstName} ${r.patient.lastName}`,
      dateOfBirth: r.patient.dateOfBirth,
    },
    recipient: r.recipient ? { name: r.recipient.name, clinic: r.recipient.clinic, email: r.recipient.email } : null,
    author: r.author.name,
    sentAt: r.referral.sentAt ? when(r.referral.sentAt) : null,
    dueOn: due ? localDate(due, p.timeZone) : null,
    acknowledgedAt: r.referral.acknowledgedAt ? when(r.referral.acknowledgedAt) : null,
    acknowledgedBy: r.referral.acknowledgedBy,
    appointmentOn: r.referral.appointmentOn,
    canChase: canChase(r.referral, now, p.timeZone),
    link: links[0]
      ? {
          expiresOn: formatDate(links[0].expiresAt, p.timeZone),
          lastOpened: links[0].lastOpenedAt ? when(links[0].lastOpenedAt) : null,
        }
      : null,
    messages: messages.map((m) => ({
      id: m.id,
      kind: MESSAGE_LABEL[m.kind],
      status: m.status,
      to: m.recipient,
      attempts: m.attempts,
      error: m.lastError,
      at: when(m.sentAt ?? m.createdAt),
    })),
    events: events.map((e) => ({
      label: EVENT_LABEL[e.kind] ?? e.kind,
      at: when(e.at),
      by: e.userName ?? e.actorName ?? "",
      date: clinical && typeof e.detail?.date === "string" ? e.detail.date : null,
    })),
  };
  if (!clinical) return { clinical: false as const, summary };

  await audit({
    action: "referral.read",
    actorUserId: user.id,
    entityType: "referral",
    entityId: r.referral.id,
    patientId: r.patient.id,
    request,
  });
  // Replies count as read once a clinician has opened the referral.
  const unread = new Set(replies.filter((x) => !x.readAt).map((x) => x.id));
  if (unread.size)
    await db
      .update(referralReplies)
      .set({ readAt: now, readById: user.id })
      .where(and(eq(referralReplies.referralId, r.referral.id), isNull(referralReplies.readAt)));
  const selected = new Set(r.referral.selectedFindings);
  const base = {
    clinical: true as const,
    summary,
    examUrl: `/patients/${r.patient.id}/exams/${r.referral.examId}`,
    examSigned: r.examStatus === "signed",
    replies: replies.map(({ readAt: _r, ...x }) => ({ ...x, createdAt: when(x.createdAt), isNew: unread.has(x.id) })),
    preview: new URL(request.url).searchParams.get("preview") === "1",
  };
  if (r.referral.status !== "draft") {
    return {
      ...base,
      draft: null,
      letter: {
        reason: r.referral.reason,
        findings: r.referral.snapshot.prompts
          .filter((x) => selected.has(findingKey(x)))
          .map((x) => ({ message: x.message, value: promptValue(x), rule: x.rule })),
        additionalFindings: r.referral.additionalFindings,
        attachments: r.attachments.map((a) => a.originalName),
      },
    };
  }
  const [recipients, uploads] = await Promise.all([
    db
      .select({
        id: referralRecipients.id,
        name: referralRecipients.name,
        clinic: referralRecipients.clinic,
        email: referralRecipients.email,
        preferredDelivery: referralRecipients.preferredDelivery,
      })
      .from(referralRecipients)
      .where(eq(referralRecipients.active, true))
      .orderBy(asc(referralRecipients.name)),
    db
      .select({
        id: documents.id,
        originalName: documents.originalName,
        kind: documents.kind,
        description: documents.description,
        contentType: documents.contentType,
        createdAt: documents.createdAt,
      })
      .from(documents)
      .where(eq(documents.patientId, r.patient.id))
      .orderBy(desc(documents.createdAt)),
  ]);
  return {
    ...base,
    letter: null,
    draft: {
      prompts: r.referral.snapshot.prompts,
      triage: triageProposal(r.referral.snapshot, r.referral.proposedUrgency),
      recipients,
      uploads: uploads.map((u) => ({ ...u, createdAt: u.createdAt.toISOString() })),
      timeFrames: timeFramesOf(p),
      defaults: {
        recipientId: r.referral.recipientId ?? "",
        urgency: r.referral.urgency,
        urgencyOverrideReason: r.referral.urgencyOverrideReason ?? "",
        reason: r.referral.reason,
        body: r.referral.body,
        relevantHistory: r.referral.relevantHistory,
        additionalFindings: r.referral.additionalFindings,
        selectedFindings: r.referral.selectedFindings,
        attachmentIds: r.attachments.map((a) => a.id),
      },
    },
  };
}

const simpleSchema = z.object({ intent: z.enum(["discard", "withdraw", "chase"]) });
const retrySchema = z.object({ intent: z.literal("retry"), messageId: z.uuid() });

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requireRole(request, STAFF_ROLES);
  const referralId = params.referralId;
  const { referral } = await loadReferral(referralId);
  const formData = await request.formData();
  const intent = String(formData.get("intent") ?? "");
  const here = `/referrals/${referral.id}`;
  const fail = (
    error: unknown,
    reply: (opts: { formErrors?: string[]; fieldErrors?: Record<string, string[]> }) => unknown,
  ) => {
    if (error instanceof ReferralError) {
      return data(reply(error.formReply), { status: error.status });
    }
    throw error;
  };
  // The front desk may chase an overdue referral (no clinical content); everything else is clinical.
  if (user.role === "receptionist" && intent !== "chase")
    throw data({ error: "Your role does not give access to this page." }, { status: 403 });

  if (intent === "save" || intent === "send") {
    const submission = parseWithZod(formData, { schema: letterSchema });
    if (submission.status !== "success") return data(submission.reply(), { status: 400 });
    try {
      await updateDraft(user, referral.id, draftValuesOf(submission.value), request);
      if (intent === "save")
        return redirectWithToast(`${here}?preview=1#preview`, { kind: "success", title: "Draft saved" });
      await sendReferral(user, referral.id, request);
    } catch (error) {
      return fail(error, (o) => submission.reply(o));
    }
    const [m] = await db
      .select({ status: referralMessages.status, error: referralMessages.lastError })
      .from(referralMessages)
      .where(eq(referralMessages.referralId, referral.id))
      .orderBy(desc(referralMessages.createdAt))
      .limit(1);
    return redirectWithToast(
      here,
      m?.status === "sent"
        ? {
            kind: "success",
            title: "Referral sent",
            description: "The letter and the recipient's link have been e-mailed.",
          }
        : {
            kind: "warning",
            title: "Referral queued",
            description: `The e-mail could not be sent yet (${m?.error ?? "relay not reached"}); it stays queued and is retried automatically.`,
          },
    );
  }
  if (intent === "retry") {
    const submission = parseWithZod(formData, { schema: retrySchema });
    if (submission.status !== "success") return data(submission.reply(), { status: 400 });
    try {
      await retryMessage(user, referral.id, submission.value.messageId, request);
    } catch (error) {
      return fail(error, (o) => submission.reply(o));
    }
    return redirectWithToast(here, { kind: "info", title: "E-mail queued again" });
  }
  const submission = parseWithZod(formData, { schema: simpleSchema });
  if (submission.status !== "success")
    return data(submission.reply({ formErrors: ["Unknown request."] }), { status: 400 });
  try {
    if (submission.value.intent === "discard") {
      await discardDraft(user, referral.id, request);
      return redirectWithToast("/referrals", { kind: "success", title: "Draft discarded" });
    }
    if (submission.value.intent === "withdraw") {
      await withdrawReferral(user, referral.id, request);
      return redirectWithToast(here, {
        kind: "success",
        title: "Referral withdrawn",
        description: "The recipient's link no longer works.",
      });
    }
    await chaseReferral(user, referral.id, request);
    return redirectWithToast(here, { kind: "success", title: "Reminder sent to the recipient" });
  } catch (error) {
    return fail(error, (o) => submission.reply(o));
  }
}

type Summary = Route.ComponentProps["loaderData"]["summary"];

function StatusPanel({ s, clinical }: { s: Summary; clinical: boolean }) {
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

function Delivery({ s }: { s: Summary }) {
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

function Timeline({ s }: { s: Summary }) {
  return (
    <Card title="History">
      <ol className="space-y-2 text-sm">
        {s.events.map((e, i) => (
          <li key={i}>
            <span className="font-semibold">{e.label}</span>
            {e.date ? ` (${e.date})` : ""} · {e.at}
            {e.by ? ` · ${e.by}` : ""}
          </li>
        ))}
      </ol>
    </Card>
  );
}

export default function ReferralPage({ loaderData, actionData }: Route.ComponentProps) {
  const s = loaderData.summary;
  const errors = (actionData as { error?: Record<string, string[]> } | undefined)?.error?.[""];
  if (!loaderData.clinical) {
    return (
      <>
        <PageHeader
          title={`Referral ${s.reference}`}
          description={`${s.patient.name} · born ${s.patient.dateOfBirth}`}
        />
        <div className="mb-6">
          <Notice tone="info" title="Status only">
            The letter and its findings are clinical notes, shown to optometrists only.
          </Notice>
        </div>
        {errors?.length ? (
          <div className="mb-6">
            <Notice tone="error" title="Not done">
              {errors.join(" ")}
            </Notice>
          </div>
        ) : null}
        <div className="grid gap-6 lg:grid-cols-2">
          <StatusPanel s={s} clinical={false} />
          <div className="space-y-6">
            <Delivery s={s} />
            <Timeline s={s} />
          </div>
        </div>
      </>
    );
  }
  const pdfUrl = `/referrals/${s.id}/letter.pdf`;
  return (
    <>
      <PageHeader
        title={`Referral ${s.reference}`}
        description={
          <>
            <Link
              to={`/patients/${s.patient.id}`}
              className="font-semibold text-accent-700 underline underline-offset-4"
            >
              {s.patient.name}
            </Link>{" "}
            · born {s.patient.dateOfBirth} ·{" "}
            <Link to={loaderData.examUrl} className="font-semibold text-accent-700 underline underline-offset-4">
              the exam
            </Link>
          </>
        }
        actions={
          <>
            <Link to="?preview=1#preview" className={buttonClass("secondary")}>
              Preview the letter
            </Link>
            <a href={`${pdfUrl}?download=1`} className={buttonClass("secondary")}>
              Download PDF
            </a>
          </>
        }
      />
      {errors?.length && !loaderData.draft ? (
        <div className="mb-6">
          <Notice tone="error" title="Not done">
            {errors.join(" ")}
          </Notice>
        </div>
      ) : null}
      {!loaderData.examSigned ? (
        <div className="mb-6">
          <Notice tone="warning" title="The exam is not signed">
            This letter cannot be sent until the exam is signed.
          </Notice>
        </div>
      ) : null}
      <div className="grid gap-6 xl:grid-cols-[1fr_24rem]">
        <div className="space-y-6">
          {loaderData.draft ? (
            <>
              <LetterForm
                mode="draft"
                defaults={loaderData.draft.defaults}
                prompts={loaderData.draft.prompts}
                triage={loaderData.draft.triage}
                recipients={loaderData.draft.recipients}
                uploads={loaderData.draft.uploads}
                timeFrames={loaderData.draft.timeFrames}
                lastResult={actionData as never}
              />
              <Form method="post" onSubmit={(e) => (!confirm("Discard this draft?") ? e.preventDefault() : undefined)}>
                <Button type="submit" name="intent" value="discard" variant="danger">
                  Discard draft
                </Button>
              </Form>
            </>
          ) : loaderData.letter ? (
            <Card title="Letter as sent">
              <h3 className="font-semibold">Reason</h3>
              <p className="mb-3 whitespace-pre-wrap">{loaderData.letter.reason}</p>
              <h3 className="font-semibold">Findings</h3>
              <ul className="mb-3 list-disc pl-5">
                {loaderData.letter.findings.map((f) => (
                  <li key={f.message}>
                    {f.message} <span className="text-muted">({f.value})</span>
                  </li>
                ))}
              </ul>
              {loaderData.letter.additionalFindings ? (
                <p className="mb-3 whitespace-pre-wrap">{loaderData.letter.additionalFindings}</p>
              ) : null}
              {loaderData.letter.attachments.length ? (
                <p className="text-sm text-muted">Enclosures: {loaderData.letter.attachments.join(", ")}</p>
              ) : null}
            </Card>
          ) : null}
          {loaderData.replies.length ? (
            <Card title="Replies">
              <ul className="space-y-4">
                {loaderData.replies.map((x) => (
                  <li key={x.id} className="rounded-md border border-line p-4">
                    <p className="flex flex-wrap items-center gap-2 text-sm text-muted">
                      {x.isNew ? <StatusBadge tone="info">New</StatusBadge> : null}
                      From {x.authorName} · {x.createdAt}
                    </p>
                    {x.body ? <p className="mt-2 whitespace-pre-wrap">{x.body}</p> : null}
                    {x.fileName ? (
                      <a
                        href={`/referrals/${s.id}/replies/${x.id}/file`}
                        className="mt-2 inline-block font-semibold text-accent-700 underline underline-offset-4"
                      >
                        Consult letter: {x.fileName}
                      </a>
                    ) : null}
                  </li>
                ))}
              </ul>
            </Card>
          ) : null}
          {loaderData.preview ? (
            <section
              id="preview"
              aria-label="Letter preview"
              className="rounded-lg border border-line bg-white p-2 shadow-sm"
            >
              <iframe title="Referral letter preview (PDF)" src={pdfUrl} className="h-[56rem] w-full rounded" />
              <p className="p-2 text-sm text-muted">
                If the preview does not show,{" "}
                <a
                  href={pdfUrl}
                  target="_blank"
                  rel="noreferrer"
                  className="font-semibold text-accent-700 underline underline-offset-4"
                >
                  open the PDF
                </a>
                .
              </p>
            </section>
          ) : null}
        </div>
        <div className="space-y-6">
          <StatusPanel s={s} clinical />
          <Delivery s={s} />
          <Timeline s={s} />
        </div>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = ({ data }) => [
  { title: `Referral ${data?.summary.reference ?? ""} · Dioptra` },
];

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
