import { data, Form, Link, useNavigation } from "react-router";
import type { Route } from "./+types/chart";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { PageHeader } from "~/components/page-header";
import { Button, buttonClass } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { StatusBadge } from "~/components/ui/notice";
import { formatRx } from "~/lib/optics";
import { examFor, latestPrompts, startExam } from "~/models/exams/exam.server";
import { CLINICAL_ROLES, requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { redirectWithToast } from "~/utils/toast.server";
import {
  appointmentsOf,
  balanceOf,
  childProgression,
  examsOf,
  invoicesOf,
  recallDue,
  refractionHistory,
} from "~/models/patients/chart.server";
import { documentsPage } from "~/models/patients/documents.server";
import { ageInYears, formatDate, formatMoney } from "~/lib/format";
import { prescriptionsOf } from "~/models/prescriptions/prescriptions.server";
import { ORDER_ROLES } from "~/models/orders/orders.server";
import { PortalInviteButton } from "~/components/portal-invite-button";
import { ChartReferrals } from "~/components/referrals/chart-referrals";
import { gpLine, referralsForChart } from "~/models/referrals/referrals.server";
import { GUARDIAN_UNDER_AGE, isUnder, isUuid } from "~/models/patients/patient-schema";
import { notFound } from "~/utils/failure.server";
import { RefractionHistory } from "./refraction-plot";
import { DocumentList, UploadForm } from "~/components/patients/uploads-ui";
import { Timeline } from "./chart-timeline";
import { patientOr404, patientReadAudited } from "~/models/patients/patients.server";

/** The page of the chart's documents asked for (`?docs=`), from 1. */
const docsPage = (request: Request) =>
  Math.min(100_000, Math.max(1, Math.trunc(Number(new URL(request.url).searchParams.get("docs"))) || 1));

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, STAFF_ROLES);
  const clinical = (CLINICAL_ROLES as readonly string[]).includes(user.role);
  const id = params.patientId;
  if (!isUuid(id)) notFound();
  // The read is recorded in the same statement that reads the patient (one round trip, never
  // lost); the rest of the chart is read beside it, and shown only if the patient exists.
  const patientRead = patientReadAudited(id, {
    action: "chart.read",
    actorUserId: user.id,
    detail: { view: clinical ? "clinical" : "front desk" },
    request,
  });
  const clinicalData = clinical
    ? Promise.all([
        examsOf(id),
        documentsPage(id, docsPage(request)),
        refractionHistory(id),
        latestPrompts(id),
        referralsForChart(id, { clinical: true }),
      ])
    : null;
  clinicalData?.catch(() => undefined); // awaited below; this keeps an early failure elsewhere from leaving it unobserved
  const [p, appointments, invoices, prescriptions, balance] = await Promise.all([
    patientRead,
    appointmentsOf(id),
    invoicesOf(id),
    prescriptionsOf(id),
    balanceOf(id),
  ]);
  const canBill = user.role === "owner" || user.role === "receptionist";
  const canOrder = (ORDER_ROLES as readonly string[]).includes(user.role);
  const demographics = {
    id: p.id,
    firstName: p.firstName,
    lastName: p.lastName,
    dateOfBirth: p.dateOfBirth,
    age: ageInYears(p.dateOfBirth),
    sex: p.sex,
    email: p.email,
    phone: p.phone,
    address: [p.addressLine1, p.city, p.postcode].filter(Boolean).join(", "),
    gp: gpLine(p),
    guardian: p.guardianName
      ? {
          name: p.guardianName,
          relationship: p.guardianRelationship,
          contact: [p.guardianPhone, p.guardianEmail].filter(Boolean).join(" · "),
        }
      : null,
    guardianRequired: p.dateOfBirth ? isUnder(p.dateOfBirth, GUARDIAN_UNDER_AGE) : false,
  };
  const today = new Date().toISOString().slice(0, 10);
  const rx = prescriptions.map((r) => ({ ...r, current: r.expiresOn >= today }));
  if (!clinical) {
    return {
      clinical: false as const,
      patient: demographics,
      appointments,
      invoices,
      prescriptions: rx,
      balance,
      canBill,
      canOrder,
    };
  }
  const [exams, documents, history, prompts, referrals] = await clinicalData!;
  return {
    clinical: true as const,
    patient: {
      ...demographics,
      allergies: p.allergies,
      noKnownAllergies: p.noKnownAllergies,
      medications: p.medications,
    },
    appointments,
    invoices,
    prescriptions: rx,
    balance,
    canBill,
    canOrder,
    exams,
    documents,
    history,
    progression: childProgression(p.dateOfBirth, history),
    recall: recallDue(exams),
    prompts,
    referrals,
  };
}

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requireRole(request, CLINICAL_ROLES);
  const p = await patientOr404(params.patientId);
  const form = await request.formData();
  if (form.get("intent") !== "start-exam") return data({ error: "Unknown action." }, { status: 400 });
  const examId = await startExam(user, p.id, request);
  await examFor(p.id, examId);
  return redirectWithToast(`/patients/${p.id}/exams/${examId}`, { kind: "success", title: "Exam started" });
}

type LD = Route.ComponentProps["loaderData"];

export default function Chart({ loaderData: d }: Route.ComponentProps) {
  const p = d.patient;
  const navigation = useNavigation();
  const currentRx = d.prescriptions.filter((r) => r.current);
  return (
    <>
      <PageHeader
        title={`${p.lastName}, ${p.firstName}`}
        description={
          <>
            Age {p.age} · born {formatDate(p.dateOfBirth)} · {p.phone ?? "no phone"} · {p.email ?? "no e-mail"}
            {p.guardian ? (
              <span className="block" data-testid="chart-guardian-header">
                {p.guardian.relationship || "Guardian"}: {p.guardian.name}
                {p.guardian.contact ? ` · ${p.guardian.contact}` : ""}
              </span>
            ) : p.guardianRequired ? (
              <span className="block font-semibold">No parent or guardian recorded: add one in Edit details.</span>
            ) : null}
          </>
        }
        actions={
          <>
            <PortalInviteButton patientId={p.id} />
            <Link to={`/schedule/book?patientId=${p.id}`} className={buttonClass("secondary")}>
              Book a visit
            </Link>
            <Link to={`/patients/${p.id}/edit`} className={buttonClass("secondary")}>
              Edit details
            </Link>
            {d.canBill ? (
              <Link to={`/billing/invoices/new?patient=${p.id}`} className={buttonClass("secondary")}>
                Raise invoice
              </Link>
            ) : null}
            {d.clinical ? (
              <Form method="post">
                <input type="hidden" name="intent" value="start-exam" />
                <Button type="submit" pending={navigation.state === "submitting"}>
                  Start a new exam
                </Button>
              </Form>
            ) : null}
          </>
        }
      />
      <p className="mb-4 text-sm" data-testid="patient-balance">
        <span className="font-semibold">Balance: </span>
        {d.balance.length
          ? d.balance
              .map(
                (b) =>
                  `${formatMoney(b.owedMinor, b.currency)} owed on ${b.invoices} ${b.invoices === 1 ? "invoice" : "invoices"}`,
              )
              .join("; ")
          : "nothing owed"}
        {d.balance.length && d.canBill ? (
          <>
            {" · "}
            <Link
              to={`/billing/balances?q=${encodeURIComponent(p.lastName)}`}
              className="font-semibold text-accent-700 underline underline-offset-4"
            >
              Outstanding balances
            </Link>
          </>
        ) : null}
      </p>
      <div className="grid gap-6 lg:grid-cols-3">
        {d.clinical ? <ClinicalSummary d={d} /> : null}
        <Card title="Current prescriptions" className={d.clinical ? "" : "lg:col-span-2"}>
          {currentRx.length ? (
            <ul className="space-y-3">
              {currentRx.map((r) => (
                <li key={r.id} className="rounded-md border border-line p-3 text-sm">
                  <p className="font-semibold">
                    {r.kind === "spectacle" ? "Spectacles" : `Contact lenses${r.lensName ? ` · ${r.lensName}` : ""}`} ·
                    expires {formatDate(r.expiresOn)}
                  </p>
                  {r.eyes.map((e) => (
                    <p key={e.eye} className="font-mono">
                      {e.eye === "right" ? "R" : "L"} {formatRx(e)}
                      {e.addPower ? ` add +${e.addPower.toFixed(2)}` : ""}
                    </p>
                  ))}
                  <p className="mt-1 flex flex-wrap gap-x-4">
                    <a
                      href={`/patients/${p.id}/prescriptions/${r.id}/pdf`}
                      className="font-semibold text-accent-800 underline"
                    >
                      Print (PDF)
                    </a>
                    {d.canOrder ? (
                      <Link
                        to={`/orders/new?patientId=${p.id}&prescriptionId=${r.id}`}
                        className="font-semibold text-accent-800 underline"
                        aria-label={`New optical order from the ${r.kind === "spectacle" ? "spectacle" : "contact-lens"} prescription of ${formatDate(r.issuedAt.slice(0, 10))}`}
                      >
                        New optical order
                      </Link>
                    ) : null}
                  </p>
                </li>
              ))}
            </ul>
          ) : (
            <p className="text-muted">No current prescription.</p>
          )}
        </Card>
        <Card title="Contact">
          <dl className="space-y-1 text-sm">
            <dt className="text-muted">Address</dt>
            <dd>{p.address || "—"}</dd>
            <dt className="text-muted">GP</dt>
            <dd data-testid="chart-gp">{p.gp || "Not recorded"}</dd>
            <dt className="text-muted">Parent or guardian</dt>
            <dd data-testid="chart-guardian">
              {p.guardian
                ? `${p.guardian.name}${p.guardian.relationship ? ` (${p.guardian.relationship})` : ""}${p.guardian.contact ? ` · ${p.guardian.contact}` : ""}`
                : "Not recorded"}
            </dd>
            <dt className="text-muted">Sex</dt>
            <dd>{p.sex === "unknown" ? "Not recorded" : p.sex}</dd>
          </dl>
        </Card>
      </div>
      {d.clinical ? (
        <div className="mt-6 space-y-6">
          <RefractionHistory points={d.history} progression={d.progression} />
          <ChartReferrals referrals={d.referrals} />
          <Card title="Documents">
            <DocumentList
              patientId={p.id}
              documents={d.documents.rows}
              paging={d.documents.paging}
              reviewFrom={`/patients/${p.id}${d.documents.paging.page > 1 ? `?docs=${d.documents.paging.page}` : ""}`}
            />
            <div className="mt-4">
              <UploadForm patientId={p.id} />
            </div>
          </Card>
        </div>
      ) : null}
      <div className="mt-6">
        <Timeline d={d} />
      </div>
    </>
  );
}

function ClinicalSummary({ d }: { d: Extract<LD, { clinical: true }> }) {
  const last = d.exams[0];
  return (
    <Card title="At a glance" className="lg:col-span-1">
      <dl className="space-y-3 text-sm">
        <div>
          <dt className="text-muted">Last exam</dt>
          <dd className="font-semibold">
            {last ? (
              <Link to={`/patients/${d.patient.id}/exams/${last.id}`} className="underline">
                {formatDate(last.examinedAt)} · {last.optometrist} ·{" "}
                {last.status === "signed" ? "signed" : "in progress"}
              </Link>
            ) : (
              "Never examined"
            )}
          </dd>
        </div>
        <div>
          <dt className="text-muted">Allergies</dt>
          <dd className="font-semibold" data-testid="chart-allergies">
            {d.patient.allergies || (d.patient.noKnownAllergies ? "None known" : "Not recorded")}
          </dd>
        </div>
        <div>
          <dt className="text-muted">Medications</dt>
          <dd className="font-semibold">{d.patient.medications || "None recorded"}</dd>
        </div>
        <div>
          <dt className="text-muted">Alerts</dt>
          <dd className="mt-1 space-y-2">
            {d.recall.due ? (
              <StatusBadge tone="warning">
                Recall due{d.recall.since ? ` (last exam over ${d.recall.months} months ago)` : " (never examined)"}
              </StatusBadge>
            ) : null}
            {d.referrals
              .filter((r) => ["draft", "queued", "sent", "overdue"].includes(r.status))
              .map((r) => (
                <div key={r.id}>
                  <StatusBadge tone={r.status === "overdue" ? "error" : "warning"}>
                    Referral{" "}
                    {r.status === "draft" ? "drafted, not sent" : r.status === "overdue" ? "overdue" : "pending"}:{" "}
                    {r.reference}
                  </StatusBadge>
                </div>
              ))}
            {d.prompts.map((pr) => (
              <div key={`${pr.code}-${pr.eye}`}>
                {pr.action === "repeat measurement" ? (
                  <StatusBadge tone="info">Repeat the measurement (not a referral prompt): {pr.message}</StatusBadge>
                ) : (
                  <StatusBadge tone="warning">Referral prompt: {pr.message}</StatusBadge>
                )}
              </div>
            ))}
            {!d.recall.due &&
            !d.prompts.length &&
            !d.referrals.some((r) => ["draft", "queued", "sent", "overdue"].includes(r.status)) ? (
              <StatusBadge tone="success">No alerts</StatusBadge>
            ) : null}
            {d.prompts.length ? (
              <p className="text-xs text-muted">Prompts from the last exam's findings; check them before referring.</p>
            ) : null}
          </dd>
        </div>
      </dl>
    </Card>
  );
}

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
