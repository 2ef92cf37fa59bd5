import { useState } from "react";
import { data, isRouteErrorResponse, Link } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/exam";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { PageHeader } from "~/components/page-header";
import { Card } from "~/components/ui/card";
import { Notice, StatusBadge } from "~/components/ui/notice";
import { formatDate } from "~/lib/format";
import { issuePrescription, PrescriptionError } from "~/models/prescriptions/prescriptions.server";
import { issueInputFrom } from "~/models/prescriptions/issue-form";
import { CLINICAL_ROLES, requireRole } from "~/utils/auth.server";
import { redirectWithToast } from "~/utils/toast.server";
import { TriagePanel } from "./triage-panel";
import { Signatures } from "./signatures";
import { DirtyContext, ExamPageContext, useDirtyTracker, type SaveReply } from "./exam-form";
import { examFor, saveSection, SectionError } from "~/models/exams/exam.server";
import { DocumentList, UploadForm } from "~/components/patients/uploads-ui";
import { examPageData } from "~/models/exams/exam-page.server";
import { addAddendum, countersignExam, signExam } from "~/models/exams/exam-signing.server";
import { DomainError } from "~/utils/failure.server";
import { EXAM_SECTION_IDS, isExamSectionId, sectionHasValues } from "~/lib/exam/section-list";
import { ExamSections } from "./exam-sections";
import { SectionMenu } from "./section-menu";
import { Addenda, SignCard } from "./exam-records";
import { Prescriptions } from "./prescription-form";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, CLINICAL_ROLES);
  const exam = await examFor(params.patientId, params.examId);
  return examPageData(user, exam, request);
}

const addendumSchema = z.object({
  section: z.string().trim().min(1, "Say which part of the exam this corrects.").max(80),
  body: z.string().trim().min(3, "Write the correction (at least a few words).").max(4000),
});
const fieldErrors = (e: z.ZodError) => {
  const out: Record<string, string[]> = {};
  for (const i of e.issues) (out[String(i.path[0] ?? "form")] ??= []).push(i.message);
  return out;
};

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requireRole(request, CLINICAL_ROLES);
  const exam = await examFor(params.patientId, params.examId);
  const form = await request.formData();
  const intent = String(form.get("intent") ?? "");

  if (intent === "save") {
    const section = String(form.get("section") ?? "");
    if (!isExamSectionId(section))
      return data({ ok: false, section, message: `Unknown section "${section}".` } satisfies SaveReply, {
        status: 400,
      });
    try {
      const savedAt = await saveSection(user, exam.patientId, exam.id, section, form, request);
      return { ok: true, section, savedAt } satisfies SaveReply;
    } catch (e) {
      if (e instanceof SectionError)
        return data({ ok: false, section, message: e.message, errors: e.fieldErrors } satisfies SaveReply, {
          status: 400,
        });
      throw e;
    }
  }

  if (intent === "sign") {
    if (user.id !== exam.optometristId)
      return data(
        {
          intent,
          ok: false,
          message:
            "Only the examining clinician signs an exam. You can countersign it once it is signed, or add an addendum.",
        },
        { status: 403 },
      );
    const signed = await signExam(user, exam, request, form.get("confirmed") === "yes");
    if (!signed.ok && signed.reason === "confirm")
      return data({ intent, ok: false, confirm: signed.warnings, message: "Check before signing" }, { status: 409 });
    if (!signed.ok) return data({ intent, ok: false, message: "This exam is already signed." }, { status: 409 });
    return redirectWithToast(`/patients/${exam.patientId}/exams/${exam.id}`, {
      kind: "success",
      title: "Exam signed",
      description: `It is now read-only; corrections are added as addenda.${signed.appointmentCompleted ? " The appointment is marked completed." : ""}`,
    });
  }

  if (intent === "countersign") {
    const note = String(form.get("note") ?? "").trim();
    if (note.length > 2000)
      return data({ intent, ok: false, message: "The note is longer than 2000 characters." }, { status: 400 });
    if (exam.status !== "signed")
      return data({ intent, ok: false, message: "Only a signed exam can be countersigned." }, { status: 409 });
    if (user.id === exam.optometristId)
      return data(
        {
          intent,
          ok: false,
          message: "The examining clinician has signed already; a countersignature is another clinician's.",
        },
        { status: 403 },
      );
    const added = await countersignExam(user, exam, note, request);
    if (!added)
      return data({ intent, ok: false, message: "You have countersigned this exam already." }, { status: 409 });
    return redirectWithToast(`/patients/${exam.patientId}/exams/${exam.id}#signatures`, {
      kind: "success",
      title: "Exam countersigned",
    });
  }

  if (intent === "addendum") {
    const parsed = addendumSchema.safeParse(Object.fromEntries(form));
    if (!parsed.success)
      return data(
        { intent, ok: false, message: "The addendum was not added.", errors: fieldErrors(parsed.error) },
        { status: 400 },
      );
    if (exam.status !== "signed")
      return data(
        { intent, ok: false, message: "Addenda are for signed exams; edit the section directly." },
        { status: 409 },
      );
    const finalRefraction = Object.fromEntries(
      [...form.entries()].flatMap(([k, v]) =>
        typeof v === "string" && /^(right|left)_(rx|add|va)$/.test(k) ? [[k, v]] : [],
      ),
    );
    try {
      await addAddendum(user, exam, { ...parsed.data, finalRefraction }, request);
    } catch (e) {
      if (!(e instanceof DomainError)) throw e;
      return data(
        { intent, ok: false, message: `The addendum was not added: ${e.message}`, errors: e.fieldErrors },
        { status: e.status },
      );
    }
    return redirectWithToast(`/patients/${exam.patientId}/exams/${exam.id}#addenda`, {
      kind: "success",
      title: "Addendum added",
    });
  }

  if (intent === "issue-rx") {
    const parsed = issueInputFrom(form);
    if (!parsed.ok)
      return data(
        {
          intent,
          ok: false,
          message: "The prescription was not issued; check the fields named.",
          errors: parsed.errors,
        },
        { status: 400 },
      );
    try {
      await issuePrescription(user, exam, parsed.input, request);
    } catch (e) {
      if (!(e instanceof PrescriptionError)) throw e;
      return data({ intent, ok: false, message: e.message, errors: e.fieldErrors }, { status: e.status });
    }
    return redirectWithToast(`/patients/${exam.patientId}/exams/${exam.id}#prescriptions`, {
      kind: "success",
      title: parsed.input.kind === "spectacle" ? "Spectacle prescription issued" : "Contact-lens prescription issued",
    });
  }

  return data({ intent, ok: false, message: `Unknown action "${intent}".` }, { status: 400 });
}

/**
 * In the browser: a section save that the server refuses by throwing (403, 409 signed meanwhile,
 * 500) or that never reaches it (connection lost) comes back as a failed save of that section,
 * so the page and what was typed stay, and the section says why.
 */
export async function clientAction({ request, serverAction }: Route.ClientActionArgs) {
  const form = await request.clone().formData();
  if (form.get("intent") !== "save") return serverAction();
  const section = String(form.get("section") ?? "");
  try {
    return await serverAction();
  } catch (e) {
    const body = isRouteErrorResponse(e) ? (e.data as { message?: string; error?: string } | undefined) : undefined;
    const message = isRouteErrorResponse(e)
      ? (body?.message ?? body?.error ?? `the server answered ${e.status}`)
      : "the server could not be reached; check the connection and keep typing, it saves again on the next change";
    return { ok: false, section, message } satisfies SaveReply;
  }
}

export default function ExamPage({ loaderData }: Route.ComponentProps) {
  const { patient, exam, values, prompts } = loaderData;
  const readOnly = exam.status === "signed";
  const tracker = useDirtyTracker();
  // Advice to repeat a measurement is not a referral prompt and is not counted as one.
  const referralPrompts = prompts.filter((p) => p.action !== "repeat measurement");
  const repeatAdvice = prompts.filter((p) => p.action === "repeat measurement");
  const [showEmpty, setShowEmpty] = useState(false);
  const recorded = (section: string) => sectionHasValues(section, values, loaderData.diagnoses);
  // A signed exam is read, not filled in: sections with nothing recorded are folded away.
  const shown = (section: string) => !readOnly || showEmpty || recorded(section);
  return (
    <DirtyContext.Provider value={tracker}>
      <ExamPageContext.Provider
        value={{ examId: exam.id, stored: loaderData.sectionStates, recorded, timeZone: loaderData.timeZone }}
      >
        <PageHeader
          title={
            <>
              Exam · {patient.lastName}, {patient.firstName}
            </>
          }
          description={
            <>
              <Link to={`/patients/${patient.id}`} className="underline">
                Chart
              </Link>{" "}
              · born {formatDate(patient.dateOfBirth)} (age {patient.age}) · examined{" "}
              {formatDate(exam.examinedAt, { timeZone: loaderData.timeZone, time: true })} by {exam.optometrist}
            </>
          }
          actions={
            <>
              {readOnly ? (
                <StatusBadge tone="success">
                  Signed by {exam.signedBy} on{" "}
                  {formatDate(exam.signedAt!, { timeZone: loaderData.timeZone, time: true })}
                </StatusBadge>
              ) : (
                <StatusBadge tone="warning">In progress</StatusBadge>
              )}
              {readOnly && loaderData.canBill ? (
                <Link
                  to={`/billing/invoices/new?exam=${exam.id}`}
                  className="font-semibold text-accent-700 underline underline-offset-4"
                >
                  Raise invoice
                </Link>
              ) : null}
            </>
          }
        />
        <SectionMenu shown={shown} states={tracker.states} readOnly={readOnly} recorded={recorded} />
        <div className="space-y-6">
          <Notice tone="info" title="Entry">
            Type refractions in the usual notation (<code>-2.25 -0.75 x 175</code>, <code>pl</code>,{" "}
            <code>+1.00 DS</code>) and acuity as 6/6 or 20/25-2 (bare numbers in the notation the acuity section
            states). Each section saves on its own a moment after you stop typing; its badge says whether it is saved.
            Allergies: {patient.allergies || "none recorded"}. Medications: {patient.medications || "none recorded"}.
          </Notice>
          {readOnly ? (
            <label className="flex min-h-11 items-center gap-2 text-sm font-semibold">
              <input
                type="checkbox"
                checked={showEmpty}
                onChange={(e) => setShowEmpty(e.target.checked)}
                className="size-5"
              />
              Show sections with nothing recorded ({EXAM_SECTION_IDS.filter((k) => !recorded(k)).length} hidden)
            </label>
          ) : null}
          <TriagePanel triage={loaderData.triage} />
          <ExamSections data={loaderData} readOnly={readOnly} shown={shown} />
          <Card title="Attachments">
            <DocumentList
              patientId={patient.id}
              documents={loaderData.documents}
              reviewFrom={`/patients/${patient.id}/exams/${exam.id}`}
            />
            <div className="mt-4">
              <UploadForm patientId={patient.id} examId={exam.id} />
            </div>
          </Card>
          {repeatAdvice.length ? (
            <Notice
              tone="info"
              title={`${repeatAdvice.length} ${repeatAdvice.length === 1 ? "measurement" : "measurements"} to repeat before deciding`}
            >
              <span data-testid="repeat-advice-summary">{repeatAdvice.map((p) => p.message).join("; ")}.</span> Advice
              to measure again, not referral prompts.
            </Notice>
          ) : null}
          {referralPrompts.length ? (
            <Notice
              tone="warning"
              title={`${referralPrompts.length} referral ${referralPrompts.length === 1 ? "prompt" : "prompts"} on this exam`}
            >
              {readOnly ? (
                <Link to={`/referrals/new?exam=${exam.id}`} className="font-semibold underline">
                  Draft a referral letter pre-filled with these measurements
                </Link>
              ) : (
                "Sign the exam to draft a referral letter from it."
              )}{" "}
              Prompts are for your judgement, not referral decisions.
            </Notice>
          ) : null}
          {readOnly ? (
            <Signatures
              signedBy={exam.signedBy}
              signedAt={exam.signedAt}
              countersignatures={loaderData.countersignatures}
              canCountersign={loaderData.canCountersign}
            />
          ) : null}
          {readOnly ? (
            <Addenda addenda={loaderData.addenda} hasFinal={loaderData.hasFinal} subjective={subjectiveOf(values)} />
          ) : (
            <SignCard
              states={tracker.states}
              canSign={loaderData.canSign}
              examiner={exam.optometrist}
              hasFinal={loaderData.hasFinal}
            />
          )}
          {readOnly ? <Prescriptions data={loaderData} /> : null}
        </div>
      </ExamPageContext.Provider>
    </DirtyContext.Provider>
  );
}

/** The subjective refraction's saved fields as the addendum's final-refraction fields name them. */
const subjectiveOf = (values: Record<string, string>) =>
  Object.fromEntries(
    Object.entries(values).flatMap(([k, v]) =>
      k.startsWith("subjective.") ? [[k.slice("subjective.".length), v]] : [],
    ),
  );

export const meta: Route.MetaFunction = ({ data: d }) => [
  { title: d ? `Exam · ${d.patient.lastName}, ${d.patient.firstName} · Dioptra` : "Exam · Dioptra" },
];

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
