import { parseWithZod } from "@conform-to/zod/v4";
import { data, Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/referral";
import { draftValuesOf, LetterForm, letterSchema } from "./letter-form";
import { Delivery, StatusPanel, Timeline } from "./referral-panels";
import {
  chaseReferral,
  discardDraft,
  latestMessage,
  loadReferral,
  ReferralError,
  referralPageData,
  retryMessage,
  sendReferral,
  updateDraft,
  withdrawReferral,
} from "~/models/referrals/referrals.server";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { PageHeader } from "~/components/page-header";
import { Button, buttonClass } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Notice, StatusBadge } from "~/components/ui/notice";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { redirectWithToast } from "~/utils/toast.server";
import { formatDate } from "~/lib/format";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, STAFF_ROLES);
  const preview = new URL(request.url).searchParams.get("preview") === "1";
  return referralPageData(user, params.referralId, preview, request);
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
    const m = await latestMessage(referral.id);
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

export default function ReferralPage({ loaderData, actionData }: Route.ComponentProps) {
  const s = loaderData.summary;
  const errors = (actionData as { error?: Record<string, string[]> } | undefined)?.error?.[""];
  if (!loaderData.clinical) {
    return (
      <>
        <PageHeader
          title={`Referral ${s.reference}`}
          description={`${s.patient.name} · born ${formatDate(s.patient.dateOfBirth)}`}
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
            · born {formatDate(s.patient.dateOfBirth)} ·{" "}
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
          {loaderData.draft ? <SendBelowPreview previewing={loaderData.preview} /> : null}
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

/** Sending sits under the letter's preview, so the letter is read before it goes; the button submits the letter form above. */
function SendBelowPreview({ previewing }: { previewing: boolean }) {
  const navigation = useNavigation();
  const busy = navigation.state === "submitting" && navigation.formData?.get("intent") === "send";
  return (
    <Card title="Send the letter">
      {previewing ? (
        <>
          <p className="mb-3 text-sm">
            Sending saves any change made above, e-mails the letter to the recipient with a link for their reply, and
            records it in the patient's chart.
          </p>
          <Button type="submit" form="letter" name="intent" value="send" pending={busy}>
            Send letter
          </Button>
        </>
      ) : (
        <p className="text-sm">
          <Link to="?preview=1#preview" className="font-semibold text-accent-700 underline underline-offset-4">
            Preview the letter
          </Link>{" "}
          to send it: the send button is under the preview.
        </p>
      )}
    </Card>
  );
}

export const meta: Route.MetaFunction = ({ data }) => [
  { title: `Referral ${data?.summary.reference ?? ""} · Dioptra` },
];

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
