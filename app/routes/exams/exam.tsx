import { eq } from "drizzle-orm";
import { useState } from "react";
import { data, Form, isRouteErrorResponse, Link, useActionData, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/exam";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { PageHeader } from "~/components/page-header";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Notice, StatusBadge } from "~/components/ui/notice";
import { patients, users } from "~/db/schema";
import {
  COLOUR_RESULTS,
  COLOUR_TESTS,
  EYE_LABEL,
  EYES,
  FIELD_METHODS,
  localDateTime,
  parseAcuity,
  parseNumber,
  parseRxText,
  PRISM_BASES,
  REFRACTION_KINDS,
  REFRACTION_LABEL,
  RELIABILITY,
  RX_CAUTIONS,
  SEGMENT_STRUCTURES,
  type EyeKey,
  type RefractionKind,
  type SegmentKey,
} from "~/lib/exam/sections";
import {
  type AcuityNotation,
  compareRx,
  formatRx,
  isMeaningfulChange,
  MEANINGFUL_CHANGE_RULE,
  screenColourVision,
  type ReferralPrompt,
  type SphCyl,
} from "~/lib/optics";
import { ageInYears as ageOn, formatDate } from "~/lib/format";
import { issuePrescription, prescriptionsOf } from "~/models/prescriptions/prescriptions.server";
import { audit } from "~/utils/audit.server";
import { BILLING_ROLES } from "~/models/billing/invoices.server";
import { CLINICAL_ROLES, requireRole } from "~/utils/auth.server";
import { db } from "~/utils/db.server";
import { redirectWithToast } from "~/utils/toast.server";
import { examAddenda, examCountersignatures, exams } from "~/db/schema";
import { asc } from "drizzle-orm";
import {
  AnteriorChamberSection,
  DilationSection,
  DiscSection,
  FundusSection,
  PupilsSection,
  RedFlagsSection,
} from "./findings-sections";
import { AcuitySection, AssessmentSection, IopSection } from "./measure-sections";
import { TriagePanel } from "./triage-panel";
import { Signatures } from "./signatures";
import {
  DirtyContext,
  ExamInput,
  ExamSelect,
  ExamTextarea,
  SectionForm,
  sectionAnchor,
  useDirtyTracker,
  type SaveReply,
} from "./exam-form";
import {
  examFor,
  examSettings,
  formValues,
  loadExam,
  previousFinal,
  promptsFor,
  saveSection,
  SectionError,
  SECTIONS,
  storedTriage,
  type Section,
} from "~/models/exams/exam.server";
import { DocumentList, UploadForm } from "~/components/patients/uploads-ui";
import { parseDecimal } from "~/lib/numbers/decimal";
import { documentsOf } from "~/models/patients/documents.server";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, CLINICAL_ROLES);
  const exam = await examFor(params.patientId, params.examId);
  const [patient] = await db
    .select({
      id: patients.id,
      firstName: patients.firstName,
      lastName: patients.lastName,
      dateOfBirth: patients.dateOfBirth,
      allergies: patients.allergies,
      medications: patients.medications,
    })
    .from(patients)
    .where(eq(patients.id, exam.patientId));
  const sections = await loadExam(exam.id);
  const [prev, prompts, optometrist, signer, prescriptions, documents, settings, countersignatures, triage] =
    await Promise.all([
      previousFinal(exam.patientId, exam.examinedAt),
      promptsFor(exam.patientId, exam, sections),
      db.select({ name: users.name }).from(users).where(eq(users.id, exam.optometristId)),
      exam.signedById
        ? db.select({ name: users.name }).from(users).where(eq(users.id, exam.signedById))
        : Promise.resolve([]),
      prescriptionsOf(exam.patientId, exam.id),
      documentsOf(exam.patientId, exam.id),
      examSettings(),
      db
        .select({
          clinicianId: examCountersignatures.clinicianId,
          clinician: users.name,
          note: examCountersignatures.note,
          signedAt: examCountersignatures.signedAt,
        })
        .from(examCountersignatures)
        .innerJoin(users, eq(users.id, examCountersignatures.clinicianId))
        .where(eq(examCountersignatures.examId, exam.id))
        .orderBy(asc(examCountersignatures.signedAt)),
      // Exams saved before triage was kept with them are triaged on reading.
      exam.triage ? Promise.resolve(exam.triage) : storedTriage(exam.id),
    ]);
  await audit({
    action: "exam.read",
    actorUserId: user.id,
    entityType: "exam",
    entityId: exam.id,
    patientId: exam.patientId,
    request,
  });
  return {
    patient: { ...patient!, age: ageOn(patient!.dateOfBirth) },
    exam: {
      id: exam.id,
      status: exam.status,
      examinedAt: exam.examinedAt.toISOString(),
      updatedAt: exam.updatedAt.toISOString(),
      signedAt: exam.signedAt?.toISOString() ?? null,
      optometrist: optometrist[0]?.name ?? "",
      signedBy: signer[0]?.name ?? null,
    },
    values: formValues(sections, settings.timeZone),
    diagnoses: sections.diagnoses.map((d) => `${d.code}|${d.eye}`),
    acuityNotation: settings.acuityNotation,
    nowLocal: localDateTime(new Date(), settings.timeZone),
    triage,
    countersignatures: countersignatures.map((c) => ({
      clinician: c.clinician,
      note: c.note,
      signedAt: c.signedAt.toISOString(),
    })),
    isExaminer: user.id === exam.optometristId,
    /** Billing is the owner's and the front desk's; of the clinical roles only the owner bills. */
    canBill: (BILLING_ROLES as readonly string[]).includes(user.role),
    canCountersign:
      exam.status === "signed" &&
      user.id !== exam.optometristId &&
      !countersignatures.some((c) => c.clinicianId === user.id),
    hasFinal: sections.refractions.some((r) => r.kind === "final"),
    addenda: sections.addenda.map((a) => ({ ...a, createdAt: a.createdAt.toISOString() })),
    previous: prev && {
      examinedAt: prev.examinedAt,
      rows: Object.fromEntries(
        prev.rows.map((r) => [
          r.eye,
          { sphere: r.sphere, cylinder: r.cylinder, axis: r.axis, addPower: r.addPower, va: r.vaNotation },
        ]),
      ) as Partial<Record<EyeKey, SphCyl & { addPower: number | null; va: string | null }>>,
    },
    prompts,
    prescriptions,
    documents,
    canSign: exam.status === "in_progress" && user.id === exam.optometristId,
  };
}

/** A typed measurement in plain decimal notation (no hexadecimal, exponents or Infinity). */
const decimalText = (label: string) =>
  z
    .string()
    .trim()
    .transform((v, ctx) => {
      const n = parseDecimal(v);
      if (n === null) {
        ctx.addIssue({ code: "custom", message: `${label}: write a decimal number, like 8.6.` });
        return z.NEVER;
      }
      return n;
    });

const addendumSchema = z.object({
  section: z.string().trim().min(1, "Say which part of the exam this corrects.").max(80),
  body: z.string().trim().min(3, "Write the correction (at least a few words).").max(4000),
});
const issueSchema = z.object({
  kind: z.enum(["spectacle", "contact_lens"], { error: "Choose spectacle or contact lens." }),
  notes: z.string().trim().max(1000).default(""),
  lensName: z.string().trim().max(120).default(""),
  baseCurveMm: z
    .union([
      z.literal(""),
      decimalText("Base curve").pipe(z.number().min(6, "Base curve 6–10 mm.").max(10, "Base curve 6–10 mm.")),
    ])
    .default(""),
  diameterMm: z
    .union([
      z.literal(""),
      decimalText("Diameter").pipe(z.number().min(8, "Diameter 8–16 mm.").max(16, "Diameter 8–16 mm.")),
    ])
    .default(""),
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
    const section = String(form.get("section") ?? "") as Section;
    if (!(SECTIONS as readonly string[]).includes(section))
      return data({ ok: false, section, message: `Unknown section "${section}".` } satisfies SaveReply, {
        status: 400,
      });
    try {
      const savedAt = await saveSection(user, exam.patientId, exam.id, section, form, request);
      return { ok: true, section, savedAt } satisfies SaveReply;
    } catch (e) {
      if (e instanceof SectionError)
        return data({ ok: false, section, message: e.message, errors: e.errors } satisfies SaveReply, { status: 400 });
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
    const signed = await db.transaction(async (tx) => {
      const [locked] = await tx.select({ status: exams.status }).from(exams).where(eq(exams.id, exam.id)).for("update");
      if (locked?.status !== "in_progress") return false;
      await tx
        .update(exams)
        .set({ status: "signed", signedAt: new Date(), signedById: user.id, updatedAt: new Date() })
        .where(eq(exams.id, exam.id));
      await audit(
        {
          action: "exam.signed",
          actorUserId: user.id,
          entityType: "exam",
          entityId: exam.id,
          patientId: exam.patientId,
          request,
        },
        tx,
      );
      return true;
    });
    if (!signed) return data({ intent, ok: false, message: "This exam is already signed." }, { status: 409 });
    return redirectWithToast(`/patients/${exam.patientId}/exams/${exam.id}`, {
      kind: "success",
      title: "Exam signed",
      description: "It is now read-only; corrections are added as addenda.",
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
    const added = await db.transaction(async (tx) => {
      const rows = await tx
        .insert(examCountersignatures)
        .values({ examId: exam.id, clinicianId: user.id, note })
        .onConflictDoNothing()
        .returning({ examId: examCountersignatures.examId });
      if (!rows.length) return false;
      await audit(
        {
          action: "exam.countersigned",
          actorUserId: user.id,
          entityType: "exam",
          entityId: exam.id,
          patientId: exam.patientId,
          request,
        },
        tx,
      );
      return true;
    });
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
    await db.transaction(async (tx) => {
      const [row] = await tx
        .insert(examAddenda)
        .values({ examId: exam.id, authorId: user.id, ...parsed.data })
        .returning({ id: examAddenda.id });
      await audit(
        {
          action: "exam.addendum_added",
          actorUserId: user.id,
          entityType: "exam_addendum",
          entityId: row!.id,
          patientId: exam.patientId,
          detail: { examId: exam.id, section: parsed.data.section },
          request,
        },
        tx,
      );
    });
    return redirectWithToast(`/patients/${exam.patientId}/exams/${exam.id}#addenda`, {
      kind: "success",
      title: "Addendum added",
    });
  }

  if (intent === "issue-rx") {
    const parsed = issueSchema.safeParse(Object.fromEntries(form));
    if (!parsed.success)
      return data(
        { intent, ok: false, message: "The prescription was not issued.", errors: fieldErrors(parsed.error) },
        { status: 400 },
      );
    const v = parsed.data;
    await issuePrescription(
      user,
      exam,
      {
        kind: v.kind,
        notes: v.notes,
        lensName: v.lensName,
        baseCurveMm: v.baseCurveMm === "" ? null : v.baseCurveMm,
        diameterMm: v.diameterMm === "" ? null : v.diameterMm,
      },
      request,
    );
    return redirectWithToast(`/patients/${exam.patientId}/exams/${exam.id}#prescriptions`, {
      kind: "success",
      title: v.kind === "spectacle" ? "Spectacle prescription issued" : "Contact-lens prescription issued",
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

type LoaderData = Route.ComponentProps["loaderData"];

const SECTION_KEYS = [
  "redflags",
  "history",
  "acuity",
  ...REFRACTION_KINDS.map((k) => `refraction:${k}`),
  "binocular",
  "pupils",
  "ac",
  "iop",
  "colour",
  "fields",
  "segments",
  "disc",
  "fundus",
  "dilation",
  "assessment",
];

/** Whether the saved values (as formValues names them) hold anything for a section. */
function sectionHasValues(section: string, values: Record<string, string>, diagnoses: string[]) {
  const keys = Object.keys(values).filter((k) => values[k] !== "");
  const any = (test: (k: string) => boolean) => keys.some(test);
  switch (section) {
    case "redflags":
      return any((k) => k.startsWith("rf_"));
    case "pupils":
      return any((k) => k.includes("_pup_"));
    case "ac":
      return any((k) => k.includes("_ac_"));
    case "disc":
      return any((k) => k.includes("_disc_"));
    case "fundus":
      return any((k) => k.includes("_fu_"));
    case "dilation":
      return any((k) => k.startsWith("dil"));
    case "history":
      return any((k) =>
        ["reason", "symptoms", "ocularHistory", "generalHistory", "medications", "familyHistory"].includes(k),
      );
    case "acuity":
      return any((k) => k.startsWith("va_"));
    case "binocular":
      return any((k) => k.startsWith("bv_"));
    case "iop":
      return any((k) => /_mmHg(_\d)?$/.test(k) || k.endsWith("_cct"));
    case "colour":
      return any((k) => k.endsWith("_test") || k.endsWith("_result"));
    case "fields":
      return any((k) => k.endsWith("_fmethod"));
    case "segments":
      return any((k) => /_(anterior|posterior)_/.test(k));
    case "assessment":
      return (
        diagnoses.length > 0 || any((k) => ["assessment", "plan", "recallMonths"].includes(k) || k.startsWith("dx_"))
      );
    default:
      return section.startsWith("refraction:") && any((k) => k.startsWith(`${section.slice("refraction:".length)}.`));
  }
}

export default function ExamPage({ loaderData }: Route.ComponentProps) {
  const { patient, exam, values, previous, prompts } = loaderData;
  const readOnly = exam.status === "signed";
  const tracker = useDirtyTracker();
  const promptsOf = (codes: string[]) => prompts.filter((p) => codes.some((c) => p.code.startsWith(c)));
  // Advice to repeat a measurement is not a referral prompt and is not counted as one.
  const referralPrompts = prompts.filter((p) => p.action !== "repeat measurement");
  const repeatAdvice = prompts.filter((p) => p.action === "repeat measurement");
  const [showEmpty, setShowEmpty] = useState(false);
  const recorded = (section: string) => sectionHasValues(section, values, loaderData.diagnoses);
  // A signed exam is read, not filled in: sections with nothing recorded are folded away.
  const shown = (section: string) => !readOnly || showEmpty || recorded(section);
  return (
    <DirtyContext.Provider value={tracker}>
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
            {new Date(exam.examinedAt).toLocaleString("en-GB", { dateStyle: "medium", timeStyle: "short" })} by{" "}
            {exam.optometrist}
          </>
        }
        actions={
          <>
            {readOnly ? (
              <StatusBadge tone="success">
                Signed by {exam.signedBy} on{" "}
                {new Date(exam.signedAt!).toLocaleString("en-GB", { dateStyle: "medium", timeStyle: "short" })}
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
      <nav aria-label="Exam sections" className="mb-6 rounded-lg border border-line bg-white px-4 py-3 text-sm">
        <ul className="flex flex-wrap gap-x-4 gap-y-1">
          {[
            ["triage", "Triage"],
            ["redflags", "Red flags"],
            ["history", "History"],
            ["acuity", "Acuity"],
            ...REFRACTION_KINDS.map((k) => [`refraction:${k}`, REFRACTION_LABEL[k].split(" (")[0]!]),
            ["binocular", "Binocular"],
            ["pupils", "Pupils"],
            ["ac", "Anterior chamber"],
            ["iop", "IOP"],
            ["colour", "Colour"],
            ["fields", "Fields"],
            ["segments", "Segments"],
            ["disc", "Disc"],
            ["fundus", "Fundus"],
            ["dilation", "Dilation"],
            ["assessment", "Assessment"],
          ]
            .filter(([k]) => k === "triage" || shown(k!))
            .map(([k, label]) => (
              <li key={k}>
                <a
                  href={k === "triage" ? "#triage-title" : `#${sectionAnchor(k!)}`}
                  className="font-semibold text-accent-800 underline-offset-4 hover:underline"
                >
                  {label}
                </a>
                {tracker.states[k!] && tracker.states[k!] !== "saved" ? (
                  <span className="ml-1 text-xs text-amber-900">
                    ({tracker.states[k!] === "failed" ? "not saved" : tracker.states[k!]})
                  </span>
                ) : null}
              </li>
            ))}
        </ul>
      </nav>
      <div className="space-y-6">
        <Notice tone="info" title="Entry">
          Type refractions in the usual notation (<code>-2.25 -0.75 x 175</code>, <code>pl</code>, <code>+1.00 DS</code>
          ) and acuity as 6/6 or 20/25-2 (bare numbers in the notation the acuity section states). Each section saves on
          its own a moment after you stop typing; its badge says whether it is saved. Allergies:{" "}
          {patient.allergies || "none recorded"}. Medications: {patient.medications || "none recorded"}.
        </Notice>
        {readOnly ? (
          <label className="flex items-center gap-2 text-sm font-semibold">
            <input
              type="checkbox"
              checked={showEmpty}
              onChange={(e) => setShowEmpty(e.target.checked)}
              className="size-4"
            />
            Show sections with nothing recorded ({SECTION_KEYS.filter((k) => !recorded(k)).length} hidden)
          </label>
        ) : null}
        <TriagePanel triage={loaderData.triage} />
        {shown("redflags") ? <RedFlagsSection values={values} readOnly={readOnly} /> : null}
        {shown("history") ? <HistorySection values={values} readOnly={readOnly} /> : null}
        {shown("acuity") ? (
          <AcuitySection
            values={values}
            readOnly={readOnly}
            prompts={promptsOf(["ACUITY"])}
            practiceNotation={loaderData.acuityNotation}
          />
        ) : null}
        <PreviousFinal previous={previous} />
        {REFRACTION_KINDS.filter((kind) => shown(`refraction:${kind}`)).map((kind) => (
          <RefractionSection
            key={kind}
            kind={kind}
            values={values}
            readOnly={readOnly}
            previous={kind === "final" || kind === "subjective" ? previous : null}
            notation={loaderData.acuityNotation}
          />
        ))}
        {shown("binocular") ? <BinocularSection values={values} readOnly={readOnly} /> : null}
        {shown("pupils") ? <PupilsSection values={values} readOnly={readOnly} /> : null}
        {shown("ac") ? <AnteriorChamberSection values={values} readOnly={readOnly} /> : null}
        {shown("iop") ? <IopSection values={values} readOnly={readOnly} prompts={promptsOf(["IOP"])} /> : null}
        {shown("colour") ? <ColourSection values={values} readOnly={readOnly} prompts={promptsOf(["COLOUR"])} /> : null}
        {shown("fields") ? (
          <FieldsSection values={values} readOnly={readOnly} prompts={promptsOf(["BLIND_SPOT", "FIELD"])} />
        ) : null}
        {shown("segments") ? <SegmentsSection values={values} readOnly={readOnly} /> : null}
        {shown("disc") ? <DiscSection values={values} readOnly={readOnly} /> : null}
        {shown("fundus") ? <FundusSection values={values} readOnly={readOnly} /> : null}
        {shown("dilation") ? (
          <DilationSection values={values} readOnly={readOnly} nowLocal={loaderData.nowLocal} />
        ) : null}
        {shown("assessment") ? <AssessmentSection values={values} readOnly={readOnly} /> : null}
        <Card title="Attachments">
          <DocumentList patientId={patient.id} documents={loaderData.documents} />
          <div className="mt-4">
            <UploadForm patientId={patient.id} examId={exam.id} />
          </div>
        </Card>
        {repeatAdvice.length ? (
          <Notice
            tone="info"
            title={`${repeatAdvice.length} ${repeatAdvice.length === 1 ? "measurement" : "measurements"} to repeat before deciding`}
          >
            <span data-testid="repeat-advice-summary">{repeatAdvice.map((p) => p.message).join("; ")}.</span> Advice to
            measure again, not referral prompts.
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
          <Addenda addenda={loaderData.addenda} />
        ) : (
          <SignCard states={tracker.states} canSign={loaderData.canSign} examiner={exam.optometrist} />
        )}
        {readOnly ? <Prescriptions data={loaderData} /> : null}
      </div>
    </DirtyContext.Provider>
  );
}

type V = { values: Record<string, string>; readOnly: boolean };

function HistorySection({ values, readOnly }: V) {
  const f = [
    ["reason", "Reason for visit"],
    ["symptoms", "Symptoms"],
    ["ocularHistory", "Ocular history"],
    ["generalHistory", "General health"],
    ["medications", "Medications"],
    ["familyHistory", "Family history"],
  ] as const;
  return (
    <SectionForm section="history" title="Case history" readOnly={readOnly}>
      <div className="grid gap-4 sm:grid-cols-2">
        {f.map(([k, label]) => (
          <ExamTextarea key={k} id={`h-${k}`} name={k} label={label} defaultValue={values[k]} />
        ))}
      </div>
    </SectionForm>
  );
}

type Previous = LoaderData["previous"];

function PreviousFinal({ previous }: { previous: Previous }) {
  return (
    <Card title="Last visit's final refraction">
      {previous ? (
        <dl className="grid gap-2 sm:grid-cols-3">
          <div>
            <dt className="text-sm text-muted">Exam of</dt>
            <dd className="font-semibold">{formatDate(previous.examinedAt)}</dd>
          </div>
          {EYES.map((eye) => (
            <div key={eye}>
              <dt className="text-sm text-muted">{EYE_LABEL[eye]}</dt>
              <dd className="font-mono font-semibold" data-testid={`previous-final-${eye}`}>
                {previous.rows[eye]
                  ? `${formatRx(previous.rows[eye]!)}${previous.rows[eye]!.addPower ? ` add +${previous.rows[eye]!.addPower!.toFixed(2)}` : ""}${previous.rows[eye]!.va ? ` · VA ${previous.rows[eye]!.va}` : ""}`
                  : "—"}
              </dd>
            </div>
          ))}
        </dl>
      ) : (
        <p className="text-muted">No earlier exam of this patient has a final refraction.</p>
      )}
    </Card>
  );
}

function ChangeCell({ before, now, eye }: { before?: SphCyl; now: SphCyl | null; eye: EyeKey }) {
  if (!before) return <span className="text-muted">No earlier final</span>;
  if (!now) return <span className="text-muted">—</span>;
  const c = compareRx(before, now);
  const meaningful = isMeaningfulChange(c);
  const f = (x: number) => `${x > 0 ? "+" : x < 0 ? "−" : ""}${Math.abs(x).toFixed(2)}`;
  return (
    <div data-testid={`change-${eye}`} className="text-xs">
      <p className="font-mono">
        ΔM {f(c.delta.M)} · ΔJ0 {f(c.delta.J0)} · ΔJ45 {f(c.delta.J45)} D
      </p>
      <p className="mt-1">
        {meaningful ? (
          <StatusBadge tone="warning">Meaningful change: {c.magnitude.toFixed(2)} D</StatusBadge>
        ) : (
          <StatusBadge tone="success">Within {c.magnitude.toFixed(2)} D (under 0.50 D)</StatusBadge>
        )}
      </p>
    </div>
  );
}

function RefractionSection({
  kind,
  values,
  readOnly,
  previous,
  notation,
}: V & { kind: RefractionKind; previous: Previous | null; notation: AcuityNotation }) {
  const label = REFRACTION_LABEL[kind];
  const short = label.split(" (")[0]!.toLowerCase();
  const v = (eye: EyeKey, p: string) => values[`${kind}.${eye}_${p}`];
  const [current, setCurrent] = useState<Record<EyeKey, SphCyl | null>>(() => ({
    right: parseRxText(v("right", "rx"), "").value,
    left: parseRxText(v("left", "rx"), "").value,
  }));
  const eyeName = (eye: EyeKey) => (eye === "right" ? "Right" : "Left");
  return (
    <SectionForm
      section={`refraction:${kind}`}
      title={label}
      readOnly={readOnly}
      description={
        previous ? (
          <details>
            <summary className="cursor-pointer font-semibold">
              Change from the last final refraction, in power-vector terms (rule and source)
            </summary>
            <p className="mt-1">
              {MEANINGFUL_CHANGE_RULE} Power vectors: Thibos LN, Wheeler W, Horner D. Power vectors: an application of
              Fourier analysis to the description and statistical analysis of refractive error. Optom Vis Sci
              1997;74:367–375. Check before prescribing.
            </p>
          </details>
        ) : undefined
      }
    >
      <div className="overflow-x-auto">
        <table className="min-w-full text-sm">
          <caption className="sr-only">{label}, right and left eye</caption>
          <thead>
            <tr className="text-left">
              <th scope="col" className="p-2">
                Eye
              </th>
              <th scope="col" className="p-2">
                Sphere / cylinder × axis
              </th>
              <th scope="col" className="p-2">
                Add
              </th>
              <th scope="col" className="p-2">
                Prism (Δ)
              </th>
              <th scope="col" className="p-2">
                Base
              </th>
              <th scope="col" className="p-2">
                Vertex (mm)
              </th>
              <th scope="col" className="p-2">
                VA
              </th>
              {previous ? (
                <th scope="col" className="p-2">
                  Change from last final
                </th>
              ) : null}
            </tr>
          </thead>
          <tbody>
            {EYES.map((eye) => {
              const E = eyeName(eye);
              return (
                <tr key={eye} className="border-t border-line align-top">
                  <th scope="row" className="p-2 text-left">
                    {EYE_LABEL[eye]}
                  </th>
                  <td className="min-w-56 p-1">
                    <ExamInput
                      id={`${kind}-${eye}-rx`}
                      name={`${eye}_rx`}
                      label={`${E} ${short} sphere, cylinder and axis`}
                      hideLabel
                      defaultValue={v(eye, "rx")}
                      validate={(t) => parseRxText(t, `${E} ${short}`).error}
                      onValue={(t) => setCurrent((c) => ({ ...c, [eye]: parseRxText(t, "").value }))}
                    />
                  </td>
                  <td className="w-24 p-1">
                    <ExamInput
                      id={`${kind}-${eye}-add`}
                      name={`${eye}_add`}
                      label={`${E} ${short} add`}
                      hideLabel
                      inputMode="decimal"
                      defaultValue={v(eye, "add")}
                      validate={(t) => parseNumber(t, `${E} add`, 0.25, 4, { step: 0.25 }).error}
                    />
                  </td>
                  <td className="w-20 p-1">
                    <ExamInput
                      id={`${kind}-${eye}-prism`}
                      name={`${eye}_prism`}
                      label={`${E} ${short} prism in prism dioptres`}
                      hideLabel
                      inputMode="decimal"
                      defaultValue={v(eye, "prism")}
                      validate={(t) => parseNumber(t, `${E} prism`, 0.25, 20, { step: 0.25 }).error}
                    />
                  </td>
                  <td className="w-24 p-1">
                    <ExamSelect
                      id={`${kind}-${eye}-base`}
                      name={`${eye}_base`}
                      label={`${E} ${short} prism base`}
                      hideLabel
                      defaultValue={v(eye, "base")}
                      options={Object.fromEntries(PRISM_BASES.map((b) => [b, b]))}
                    />
                  </td>
                  <td className="w-20 p-1">
                    <ExamInput
                      id={`${kind}-${eye}-vertex`}
                      name={`${eye}_vertex`}
                      label={`${E} ${short} vertex distance in mm`}
                      hideLabel
                      inputMode="decimal"
                      defaultValue={v(eye, "vertex")}
                      validate={(t) => parseNumber(t, `${E} vertex`, 0, 25, { step: 0.5 }).error}
                    />
                  </td>
                  <td className="w-28 p-1">
                    <ExamInput
                      id={`${kind}-${eye}-va`}
                      name={`${eye}_va`}
                      label={`${E} ${short} VA`}
                      hideLabel
                      defaultValue={v(eye, "va")}
                      validate={(t) => parseAcuity(t, `${E} VA`, { notation, distance: "distance" }).error}
                      echo={(t) => parseAcuity(t, `${E} VA`, { notation, distance: "distance" }).value?.echo}
                    />
                  </td>
                  {previous ? (
                    <td className="min-w-64 p-2">
                      <ChangeCell before={previous.rows[eye]} now={current[eye]} eye={eye} />
                    </td>
                  ) : null}
                </tr>
              );
            })}
          </tbody>
        </table>
      </div>
    </SectionForm>
  );
}

function BinocularSection({ values, readOnly }: V) {
  return (
    <SectionForm section="binocular" title="Binocular vision" readOnly={readOnly}>
      <div className="grid gap-4 sm:grid-cols-3">
        <ExamInput
          id="bv-ctd"
          name="bv_coverTestDistance"
          label="Cover test, distance"
          defaultValue={values.bv_coverTestDistance}
        />
        <ExamInput
          id="bv-ctn"
          name="bv_coverTestNear"
          label="Cover test, near"
          defaultValue={values.bv_coverTestNear}
        />
        <ExamInput
          id="bv-npc"
          name="bv_npcCm"
          label="Near point of convergence (cm)"
          inputMode="decimal"
          defaultValue={values.bv_npcCm}
          validate={(t) => parseNumber(t, "Near point of convergence (cm)", 0, 100).error}
        />
        <ExamInput id="bv-stt" name="bv_stereoTest" label="Stereo test used" defaultValue={values.bv_stereoTest} />
        <ExamInput
          id="bv-sts"
          name="bv_stereoArcSec"
          label="Stereo acuity (seconds of arc)"
          inputMode="numeric"
          defaultValue={values.bv_stereoArcSec}
          validate={(t) => parseNumber(t, "Stereo acuity", 1, 10000, { integer: true }).error}
        />
        <ExamInput id="bv-notes" name="bv_notes" label="Notes" defaultValue={values.bv_notes} />
      </div>
    </SectionForm>
  );
}

function PerEyeGrid({ children }: { children: (eye: EyeKey, E: string) => React.ReactNode }) {
  return (
    <div className="grid gap-6 md:grid-cols-2">
      {EYES.map((eye) => (
        <fieldset key={eye} className="rounded-md border border-line p-3">
          <legend className="px-1 text-sm font-bold">{EYE_LABEL[eye]}</legend>
          <div className="grid gap-3 sm:grid-cols-2">{children(eye, eye === "right" ? "Right" : "Left")}</div>
        </fieldset>
      ))}
    </div>
  );
}

function ColourSection({ values, readOnly, prompts }: V & { prompts: ReferralPrompt[] }) {
  return (
    <SectionForm section="colour" title="Colour vision" readOnly={readOnly} prompts={prompts}>
      <PerEyeGrid>
        {(eye, E) => (
          <>
            <ExamSelect
              id={`cv-${eye}-test`}
              name={`${eye}_test`}
              label={`${E} colour test`}
              defaultValue={values[`${eye}_test`]}
              options={COLOUR_TESTS}
            />
            <ExamSelect
              id={`cv-${eye}-result`}
              name={`${eye}_result`}
              label={`${E} colour result`}
              defaultValue={values[`${eye}_result`]}
              options={COLOUR_RESULTS}
            />
            <ExamInput
              id={`cv-${eye}-correct`}
              name={`${eye}_correct`}
              label={`${E} plates read`}
              inputMode="numeric"
              defaultValue={values[`${eye}_correct`]}
            />
            <ExamInput
              id={`cv-${eye}-shown`}
              name={`${eye}_shown`}
              label={`${E} plates shown`}
              inputMode="numeric"
              defaultValue={values[`${eye}_shown`]}
            />
            <ExamInput
              id={`cv-${eye}-notes`}
              name={`${eye}_cvnotes`}
              label={`${E} colour notes`}
              defaultValue={values[`${eye}_cvnotes`]}
            />
            <PlateScreening
              test={values[`${eye}_test`]}
              correct={values[`${eye}_correct`]}
              shown={values[`${eye}_shown`]}
            />
          </>
        )}
      </PerEyeGrid>
    </SectionForm>
  );
}

/** The engine's reading of a saved plate score (38-plate edition only has a built-in criterion). */
function PlateScreening({ test, correct, shown }: { test?: string; correct?: string; shown?: string }) {
  if (test !== "plates_38" || correct === undefined || shown === undefined) return null;
  let text: string;
  let tone: "success" | "warning" | "info" = "info";
  let rule = "";
  try {
    const r = screenColourVision({ test: "ishihara-38", platesCorrect: Number(correct), platesShown: Number(shown) });
    text = `Plate score reads as: ${r.result} (${r.reasons.join("; ")})`;
    tone = r.result === "normal" ? "success" : r.result === "deficiency suspected" ? "warning" : "info";
    rule = `${r.rule}. Source: ${r.source}.`;
  } catch (e) {
    text = e instanceof Error ? e.message : String(e);
  }
  return (
    <div className="text-xs sm:col-span-2" data-testid="plate-screening">
      <StatusBadge tone={tone}>{text}</StatusBadge>
      {rule ? <p className="mt-1 text-muted">{rule} Check before recording the result.</p> : null}
    </div>
  );
}

function FieldsSection({ values, readOnly, prompts }: V & { prompts: ReferralPrompt[] }) {
  const deg = (E: string, what: string, min: number, max: number) => (t: string) =>
    parseNumber(t, `${E} ${what}`, min, max).error;
  return (
    <SectionForm
      section="fields"
      title="Visual fields and blind spot"
      readOnly={readOnly}
      prompts={prompts}
      description="Blind-spot centre in degrees from fixation: horizontal positive temporally, vertical positive above. Attach an automated printout under Attachments."
    >
      <PerEyeGrid>
        {(eye, E) => (
          <>
            <ExamSelect
              id={`vf-${eye}-method`}
              name={`${eye}_fmethod`}
              label={`${E} field method`}
              defaultValue={values[`${eye}_fmethod`]}
              options={FIELD_METHODS}
            />
            <ExamSelect
              id={`vf-${eye}-rel`}
              name={`${eye}_reliability`}
              label={`${E} reliability`}
              defaultValue={values[`${eye}_reliability`]}
              options={RELIABILITY}
            />
            <ExamInput
              id={`vf-${eye}-x`}
              name={`${eye}_bsX`}
              label={`${E} blind-spot centre, horizontal (°)`}
              inputMode="decimal"
              defaultValue={values[`${eye}_bsX`]}
              validate={deg(E, "blind-spot centre, horizontal", -40, 40)}
            />
            <ExamInput
              id={`vf-${eye}-y`}
              name={`${eye}_bsY`}
              label={`${E} blind-spot centre, vertical (°)`}
              inputMode="decimal"
              defaultValue={values[`${eye}_bsY`]}
              validate={deg(E, "blind-spot centre, vertical", -30, 30)}
            />
            <ExamInput
              id={`vf-${eye}-w`}
              name={`${eye}_bsW`}
              label={`${E} blind-spot width (°)`}
              inputMode="decimal"
              defaultValue={values[`${eye}_bsW`]}
              validate={deg(E, "blind-spot width", 0.1, 40)}
            />
            <ExamInput
              id={`vf-${eye}-h`}
              name={`${eye}_bsH`}
              label={`${E} blind-spot height (°)`}
              inputMode="decimal"
              defaultValue={values[`${eye}_bsH`]}
              validate={deg(E, "blind-spot height", 0.1, 40)}
            />
            <label className="flex items-center gap-2 text-sm font-semibold">
              <input
                type="checkbox"
                name={`${eye}_defect`}
                defaultChecked={values[`${eye}_defect`] === "on"}
                className="size-4"
              />
              {E}: field defect present
            </label>
            <ExamInput
              id={`vf-${eye}-defects`}
              name={`${eye}_defects`}
              label={`${E} defects described`}
              defaultValue={values[`${eye}_defects`]}
            />
          </>
        )}
      </PerEyeGrid>
    </SectionForm>
  );
}

function SegmentsSection({ values, readOnly }: V) {
  return (
    <SectionForm
      section="segments"
      title="Anterior and posterior segment"
      readOnly={readOnly}
      description="Tick the structures seen as normal; describe anything else."
    >
      <div className="grid gap-6 md:grid-cols-2">
        {EYES.map((eye) =>
          (Object.keys(SEGMENT_STRUCTURES) as SegmentKey[]).map((segment) => {
            const ticked = (values[`${eye}_${segment}_normal`] ?? "").split(",");
            const E = eye === "right" ? "Right" : "Left";
            return (
              <fieldset key={`${eye}-${segment}`} className="rounded-md border border-line p-3">
                <legend className="px-1 text-sm font-bold">
                  {E} eye, {segment} segment
                </legend>
                <div className="grid grid-cols-2 gap-2">
                  {Object.entries(SEGMENT_STRUCTURES[segment]).map(([k, label]) => (
                    <label key={k} className="flex items-center gap-2 text-sm">
                      <input
                        type="checkbox"
                        name={`${eye}_${segment}_normal`}
                        value={k}
                        defaultChecked={ticked.includes(k)}
                        className="size-4"
                      />
                      {label} normal
                    </label>
                  ))}
                </div>
                <div className="mt-3">
                  <ExamTextarea
                    id={`seg-${eye}-${segment}`}
                    name={`${eye}_${segment}_notes`}
                    label={`${E} ${segment} findings`}
                    defaultValue={values[`${eye}_${segment}_notes`]}
                  />
                </div>
              </fieldset>
            );
          }),
        )}
      </div>
    </SectionForm>
  );
}

function SignCard({
  states,
  canSign,
  examiner,
}: {
  states: Record<string, string>;
  canSign: boolean;
  examiner: string;
}) {
  const navigation = useNavigation();
  const pending = Object.entries(states)
    .filter(([, s]) => s !== "saved")
    .map(([k]) => k);
  const actionData = useActionData<{ intent?: string; message?: string }>();
  return (
    <Card title="Sign the exam">
      <p className="mb-3 text-sm text-muted">
        A signed exam is locked. Later corrections are added as addenda that record who made them and when.
      </p>
      {actionData?.intent === "sign" && actionData.message ? <Notice tone="error" title={actionData.message} /> : null}
      {pending.length ? (
        <Notice tone="warning" title="Some sections are not saved yet">
          Wait for every section to show “Saved”, or correct the fields it names: {pending.join(", ")}.
        </Notice>
      ) : null}
      {!canSign ? (
        <Notice tone="info" title={`Only the examining clinician (${examiner}) signs this exam.`}>
          Once it is signed you can countersign it or add an addendum.
        </Notice>
      ) : (
        <Form method="post" className="mt-3">
          <input type="hidden" name="intent" value="sign" />
          <Button
            type="submit"
            disabled={pending.length > 0}
            pending={navigation.state === "submitting" && navigation.formData?.get("intent") === "sign"}
          >
            Sign exam
          </Button>
        </Form>
      )}
    </Card>
  );
}

function Addenda({ addenda }: { addenda: LoaderData["addenda"] }) {
  const actionData = useActionData<{ intent?: string; message?: string; errors?: Record<string, string[]> }>();
  const errors = actionData?.intent === "addendum" ? (actionData.errors ?? {}) : {};
  return (
    <section id="addenda">
      <Card title="Addenda">
        {addenda.length ? (
          <ol className="mb-4 space-y-3">
            {addenda.map((a) => (
              <li key={a.id} className="rounded-md border border-line p-3">
                <p className="text-sm text-muted">
                  {a.section} · {a.author} ·{" "}
                  {new Date(a.createdAt).toLocaleString("en-GB", { dateStyle: "medium", timeStyle: "short" })}
                </p>
                <p className="mt-1 whitespace-pre-wrap">{a.body}</p>
              </li>
            ))}
          </ol>
        ) : (
          <p className="mb-4 text-muted">No addenda.</p>
        )}
        <Form method="post" className="grid gap-3 sm:grid-cols-[14rem_1fr_auto] sm:items-end">
          <input type="hidden" name="intent" value="addendum" />
          <div>
            <label htmlFor="ad-section" className="mb-1 block text-sm font-semibold">
              Part of the exam
            </label>
            <input
              id="ad-section"
              name="section"
              className="block w-full rounded-md border border-line px-3 py-2"
              aria-invalid={errors.section ? true : undefined}
              aria-describedby={errors.section ? "ad-section-error" : undefined}
            />
            {errors.section ? (
              <p id="ad-section-error" className="mt-1 text-sm font-semibold text-red-800">
                ✕ {errors.section[0]}
              </p>
            ) : null}
          </div>
          <div>
            <label htmlFor="ad-body" className="mb-1 block text-sm font-semibold">
              Correction
            </label>
            <textarea
              id="ad-body"
              name="body"
              rows={2}
              className="block w-full rounded-md border border-line px-3 py-2"
              aria-invalid={errors.body ? true : undefined}
              aria-describedby={errors.body ? "ad-body-error" : undefined}
            />
            {errors.body ? (
              <p id="ad-body-error" className="mt-1 text-sm font-semibold text-red-800">
                ✕ {errors.body[0]}
              </p>
            ) : null}
          </div>
          <Button type="submit">Add addendum</Button>
        </Form>
      </Card>
    </section>
  );
}

function Prescriptions({ data: d }: { data: LoaderData }) {
  const [kind, setKind] = useState<"spectacle" | "contact_lens">("spectacle");
  const actionData = useActionData<{ intent?: string; message?: string; errors?: Record<string, string[]> }>();
  const errors = actionData?.intent === "issue-rx" ? (actionData.errors ?? {}) : {};
  return (
    <section id="prescriptions">
      <Card title="Prescriptions from this exam">
        {d.prescriptions.length ? (
          <ul className="mb-4 space-y-2">
            {d.prescriptions.map((p) => (
              <li
                key={p.id}
                className="flex flex-wrap items-center justify-between gap-2 rounded-md border border-line p-3"
              >
                <span>
                  <span className="font-semibold">{p.kind === "spectacle" ? "Spectacle" : "Contact lens"}</span> ·
                  issued {formatDate(p.issuedAt)} · expires {formatDate(p.expiresOn)} ·{" "}
                  {p.eyes.map((e) => `${e.eye === "right" ? "R" : "L"} ${formatRx(e)}`).join("; ")}
                </span>
                <a
                  href={`/patients/${d.patient.id}/prescriptions/${p.id}/pdf`}
                  className="font-semibold text-accent-800 underline"
                  download
                >
                  Download PDF
                </a>
              </li>
            ))}
          </ul>
        ) : null}
        {!d.hasFinal ? (
          <Notice tone="info" title="No final refraction">
            Record a final refraction to issue a prescription from this exam.
          </Notice>
        ) : (
          <Form method="post" className="space-y-3">
            <input type="hidden" name="intent" value="issue-rx" />
            {actionData?.intent === "issue-rx" && actionData.message ? (
              <Notice tone="error" title={actionData.message} />
            ) : null}
            <fieldset>
              <legend className="mb-1 text-sm font-semibold">Kind</legend>
              <div className="flex gap-4">
                <label className="flex items-center gap-2">
                  <input
                    type="radio"
                    name="kind"
                    value="spectacle"
                    checked={kind === "spectacle"}
                    onChange={() => setKind("spectacle")}
                  />{" "}
                  Spectacles
                </label>
                <label className="flex items-center gap-2">
                  <input
                    type="radio"
                    name="kind"
                    value="contact_lens"
                    checked={kind === "contact_lens"}
                    onChange={() => setKind("contact_lens")}
                  />{" "}
                  Contact lenses
                </label>
              </div>
            </fieldset>
            {kind === "contact_lens" ? (
              <div className="grid gap-3 sm:grid-cols-3">
                <ExamInput id="rx-lens" name="lensName" label="Lens (brand and type)" />
                <ExamInput id="rx-bc" name="baseCurveMm" label="Base curve (mm)" inputMode="decimal" />
                <ExamInput id="rx-dia" name="diameterMm" label="Diameter (mm)" inputMode="decimal" />
              </div>
            ) : null}
            {Object.values(errors).flat().length ? (
              <Notice tone="error" title="Check the fields">
                {Object.values(errors).flat().join(" ")}
              </Notice>
            ) : null}
            <ExamInput id="rx-notes" name="notes" label="Notes for the dispenser (optional)" />
            <ul className="list-disc pl-5 text-sm text-muted">
              {RX_CAUTIONS.map((c) => (
                <li key={c}>{c}</li>
              ))}
            </ul>
            <Button type="submit">Issue prescription</Button>
          </Form>
        )}
      </Card>
    </section>
  );
}

export const meta: Route.MetaFunction = ({ data: d }) => [
  { title: d ? `Exam · ${d.patient.lastName}, ${d.patient.firstName} · Dioptra` : "Exam · Dioptra" },
];

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
