import { parseWithZod } from "@conform-to/zod/v4";
import { data, Link } from "react-router";
import type { Route } from "./+types/new";
import { draftValuesOf, LetterForm, letterSchema } from "./letter-form";
import {
  candidateExams,
  createDraft,
  isUuid,
  letterChoices,
  letterPatient,
  lettersOfExam,
  practice,
  prefill,
  ReferralError,
  referableExam,
  snapshotOf,
  triageProposal,
} from "~/models/referrals/referrals.server";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { PageHeader } from "~/components/page-header";
import { buttonClass } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Notice } from "~/components/ui/notice";
import { timeFramesOf } from "~/lib/referrals";
import { audit } from "~/utils/audit.server";
import { CLINICAL_ROLES, requireRole } from "~/utils/auth.server";
import { redirectWithToast } from "~/utils/toast.server";
import { formatDate } from "~/lib/format";
import { notFound } from "~/utils/failure.server";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireRole(request, CLINICAL_ROLES);
  const examId = new URL(request.url).searchParams.get("exam");
  const p = await practice();
  if (!examId) {
    const candidates = await candidateExams();
    return {
      kind: "choose" as const,
      candidates: candidates.map((c) => ({
        id: c.id,
        patientId: c.patientId,
        patient: `${c.firstName} ${c.lastName}`,
        dateOfBirth: c.dateOfBirth,
        examinedOn: formatDate(c.examinedAt, { timeZone: p.timeZone, style: "long" }),
        prompts: c.prompts,
      })),
    };
  }
  if (!isUuid(examId)) notFound();
  const exam = await referableExam(examId);
  const patient = await letterPatient(exam.patientId);
  await audit({
    action: "referral.compose_opened",
    actorUserId: user.id,
    entityType: "exam",
    entityId: exam.id,
    patientId: exam.patientId,
    request,
  });
  const examUrl = `/patients/${exam.patientId}/exams/${exam.id}`;
  const patientInfo = {
    id: patient.id,
    name: `${patient.firstName} ${patient.lastName}`,
    dateOfBirth: patient.dateOfBirth,
    examinedOn: formatDate(exam.examinedAt, { timeZone: p.timeZone, style: "long" }),
    examUrl,
  };
  if (exam.status !== "signed") return { kind: "unsigned" as const, patient: patientInfo };
  const snapshot = await snapshotOf(exam);
  const filled = prefill(snapshot, patient!);
  const [{ recipients, uploads }, existing] = await Promise.all([
    letterChoices(exam.patientId),
    lettersOfExam(exam.id),
  ]);
  // Field printouts of this exam are enclosed by default.
  const attachmentIds = uploads.filter((u) => u.kind === "field_printout").map((u) => u.id);
  return {
    kind: "compose" as const,
    patient: patientInfo,
    prompts: snapshot.prompts,
    triage: triageProposal(snapshot),
    recipients,
    uploads: uploads.map((u) => ({ ...u, createdAt: u.createdAt.toISOString() })),
    timeFrames: timeFramesOf(p),
    existing,
    defaults: {
      urgency: filled.urgency,
      urgencyOverrideReason: "",
      reason: filled.reason,
      body: filled.body,
      relevantHistory: filled.history,
      selectedFindings: filled.selectedFindings,
      attachmentIds,
    },
  };
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, CLINICAL_ROLES);
  const examId = new URL(request.url).searchParams.get("exam");
  const submission = parseWithZod(await request.formData(), { schema: letterSchema });
  if (submission.status !== "success") return data(submission.reply(), { status: 400 });
  try {
    const id = await createDraft(user, examId ?? "", draftValuesOf(submission.value), request);
    return redirectWithToast(`/referrals/${id}?preview=1#preview`, {
      kind: "success",
      title: "Draft saved",
      description: "Check the letter in the preview, then send it.",
    });
  } catch (error) {
    if (error instanceof ReferralError) {
      return data(submission.reply(error.formReply), { status: error.status });
    }
    throw error;
  }
}

export default function NewReferral({ loaderData, actionData }: Route.ComponentProps) {
  if (loaderData.kind === "choose") {
    return (
      <>
        <PageHeader
          title="New referral"
          description="Referrals start from a signed exam. These signed exams have findings that were flagged and no referral yet."
        />
        {loaderData.candidates.length === 0 ? (
          <Notice tone="info" title="No exams waiting">
            No signed exam with flagged findings is waiting for a referral. To refer from any other exam, open it from
            the patient's chart and choose “Refer”.
          </Notice>
        ) : (
          <ul className="space-y-3">
            {loaderData.candidates.map((c) => (
              <li key={c.id}>
                <Card>
                  <div className="flex flex-wrap items-start justify-between gap-4">
                    <div>
                      <p className="text-lg font-semibold">{c.patient}</p>
                      <p className="text-sm text-muted">
                        Born {formatDate(c.dateOfBirth)} · examined {c.examinedOn}
                      </p>
                      <ul className="mt-2 list-disc pl-5 text-sm">
                        {c.prompts.map((m) => (
                          <li key={m}>{m}</li>
                        ))}
                      </ul>
                    </div>
                    <Link to={`/referrals/new?exam=${c.id}`} className={buttonClass("primary")}>
                      Start referral<span className="sr-only"> for {c.patient}</span>
                    </Link>
                  </div>
                </Card>
              </li>
            ))}
          </ul>
        )}
      </>
    );
  }
  if (loaderData.kind === "unsigned") {
    return (
      <>
        <PageHeader
          title={`Referral for ${loaderData.patient.name}`}
          description={`Exam of ${loaderData.patient.examinedOn}`}
        />
        <Notice tone="warning" title="Sign the exam first">
          This exam is not signed. A referral carries only signed findings, so the letter cannot be drafted until the
          exam is signed.{" "}
          <Link to={loaderData.patient.examUrl} className="font-semibold underline underline-offset-4">
            Open the exam to sign it
          </Link>
          .
        </Notice>
      </>
    );
  }
  return (
    <>
      <PageHeader
        title={`Referral for ${loaderData.patient.name}`}
        description={
          <>
            Born {formatDate(loaderData.patient.dateOfBirth)} · from the signed exam of {loaderData.patient.examinedOn}{" "}
            ·{" "}
            <Link
              to={loaderData.patient.examUrl}
              className="font-semibold text-accent-700 underline underline-offset-4"
            >
              open the exam
            </Link>
          </>
        }
      />
      {loaderData.existing.length ? (
        <div className="mb-6">
          <Notice tone="info" title="This exam already has a referral">
            {loaderData.existing.map((e) => (
              <Link key={e.id} to={`/referrals/${e.id}`} className="mr-3 font-semibold underline underline-offset-4">
                Open the {e.status} referral
              </Link>
            ))}
          </Notice>
        </div>
      ) : null}
      <LetterForm
        mode="create"
        triage={loaderData.triage}
        defaults={loaderData.defaults}
        prompts={loaderData.prompts}
        recipients={loaderData.recipients}
        uploads={loaderData.uploads}
        timeFrames={loaderData.timeFrames}
        lastResult={actionData}
      />
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "New referral · Dioptra" }];

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
