import { parseWithZod } from "@conform-to/zod/v4";
import { data, Form, Link } from "react-router";
import type { Route } from "./+types/new";
import { PageHeader } from "~/components/page-header";
import { matchCount } from "~/components/patient-search";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input } from "~/components/ui/input";
import { formatRx } from "~/lib/optics";
import {
  activeFrames,
  activeLabs,
  createContactLensOrder,
  createSpectacleOrder,
  itemFees,
  ORDER_ROLES,
  orderablePrescriptions,
  OrderError,
  orderPatient,
  practiceOrderSettings,
} from "~/models/orders/orders.server";
import { formatDate } from "~/lib/format";
import { isUuid } from "~/models/patients/patient-schema";
import { searchPatientsPage } from "~/models/patients/patients.server";
import { requireRole } from "~/utils/auth.server";
import { redirectWithToast } from "~/utils/toast.server";
import { contactLensOrderSchema, spectacleOrderSchema } from "~/models/orders/order-schema";
import { notFound } from "~/utils/failure.server";
import { RxSummary, SpectacleForm, ContactLensForm, type FormData_ } from "./order-forms";

/** Patients listed per page when finding one for an order. */
const PATIENT_PAGE = 20;

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ORDER_ROLES);
  const url = new URL(request.url);
  const q = url.searchParams.get("q")?.trim() ?? "";
  const patientId = url.searchParams.get("patientId") ?? "";
  const prescriptionId = url.searchParams.get("prescriptionId") ?? "";
  if (!isUuid(patientId)) {
    const pageText = url.searchParams.get("page") ?? "1";
    const page = /^\d{1,3}$/.test(pageText) && Number(pageText) >= 1 ? Number(pageText) : 1;
    const found = q
      ? await searchPatientsPage(q, { limit: PATIENT_PAGE, offset: (page - 1) * PATIENT_PAGE })
      : { results: [], total: 0, totalIsExact: true };
    return {
      step: "patient" as const,
      q,
      page,
      hits: found.results,
      total: found.total,
      totalIsExact: found.totalIsExact,
    };
  }
  const patient = await orderPatient(patientId);
  if (!patient) notFound("There is no such patient.");
  const rxs = await orderablePrescriptions(patientId);
  const rx = rxs.find((r) => r.id === prescriptionId) ?? null;
  const settings = await practiceOrderSettings();
  return {
    step: rx ? ("form" as const) : ("prescription" as const),
    patient,
    prescriptions: rxs,
    rx,
    currency: settings.currency,
    frames: rx
      ? (await activeFrames()).map((f) => ({
          id: f.id,
          label: `${f.supplier} ${f.model}, ${f.colour}, ${f.size}`,
          priceMinor: f.priceMinor,
          quantity: f.quantity,
        }))
      : [],
    labs: rx ? (await activeLabs()).map((l) => ({ id: l.id, name: l.name })) : [],
    fees: rx
      ? (await itemFees()).map((f) => ({ id: f.id, label: `${f.code} — ${f.description}`, priceMinor: f.priceMinor }))
      : [],
  };
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, ORDER_ROLES);
  const url = new URL(request.url);
  const patientId = url.searchParams.get("patientId") ?? "";
  if (!isUuid(patientId)) throw data({ error: "Choose a patient." }, { status: 400 });
  const formData = await request.formData();
  const kind = formData.get("kind");
  const submission = parseWithZod(formData, {
    schema: kind === "contact_lenses" ? contactLensOrderSchema : spectacleOrderSchema,
  });
  if (submission.status !== "success") return data(submission.reply(), { status: 400 });
  const v = submission.value;
  try {
    const created =
      v.kind === "spectacles"
        ? await createSpectacleOrder(
            user,
            { ...v, patientId, heightRightMm: v.heightRightMm ?? null, heightLeftMm: v.heightLeftMm ?? null },
            request,
          )
        : await createContactLensOrder(user, { ...v, patientId }, request);
    return redirectWithToast(`/orders/${created.id}`, {
      kind: created.invoiceId ? "success" : "warning",
      title: "Order saved as a draft",
      description: created.invoiceId
        ? "Its invoice has been raised. Send it to the lab when ready."
        : "The invoice could not be raised; raise it from the order page.",
    });
  } catch (error) {
    if (error instanceof OrderError) {
      return data(
        submission.reply({
          ...(error.field ? { fieldErrors: { [error.field]: [error.message] } } : { formErrors: [error.message] }),
        }),
        { status: error.status === 404 ? 404 : 400 },
      );
    }
    throw error;
  }
}

export default function NewOrder({ loaderData, actionData }: Route.ComponentProps) {
  const d = loaderData;
  if (d.step === "patient") {
    return (
      <>
        <PageHeader title="New order" description="Orders are built from a patient's prescription." />
        <Card title="Find the patient">
          <Form method="get" className="flex flex-wrap items-end gap-3">
            <div className="grow">
              <label htmlFor="q" className="mb-1 block text-sm font-semibold">
                Name, phone, e-mail or date of birth
              </label>
              <Input id="q" name="q" type="search" defaultValue={d.q} />
            </div>
            <Button type="submit">Search</Button>
          </Form>
          {d.q ? (
            d.hits.length ? (
              <>
                <p className="mt-4 text-sm text-muted" data-testid="order-patient-count">
                  {matchCount(d.total, d.totalIsExact)}
                  {d.total > d.hits.length
                    ? ` · showing ${(d.page - 1) * PATIENT_PAGE + 1}–${(d.page - 1) * PATIENT_PAGE + d.hits.length}`
                    : ""}
                </p>
                <ul className="mt-2 divide-y divide-line">
                  {d.hits.map((h) => (
                    <li key={h.id} className="py-2">
                      <Link
                        to={`/orders/new?patientId=${h.id}`}
                        className="font-semibold text-accent-700 underline underline-offset-4"
                      >
                        {h.firstName} {h.lastName}
                      </Link>{" "}
                      <span className="text-sm text-muted">born {formatDate(h.dateOfBirth)}</span>
                    </li>
                  ))}
                </ul>
                <nav aria-label="More matching patients" className="mt-3 flex gap-4 text-sm">
                  {d.page > 1 ? (
                    <Link
                      to={`/orders/new?q=${encodeURIComponent(d.q)}&page=${d.page - 1}`}
                      className="font-semibold text-accent-700 underline underline-offset-4"
                    >
                      Previous {PATIENT_PAGE}
                    </Link>
                  ) : null}
                  {d.page * PATIENT_PAGE < d.total ? (
                    <Link
                      to={`/orders/new?q=${encodeURIComponent(d.q)}&page=${d.page + 1}`}
                      className="font-semibold text-accent-700 underline underline-offset-4"
                    >
                      Next {PATIENT_PAGE}
                    </Link>
                  ) : null}
                </nav>
              </>
            ) : (
              <p className="mt-4 text-muted">No patient matches “{d.q}”.</p>
            )
          ) : null}
        </Card>
      </>
    );
  }
  const name = `${d.patient.firstName} ${d.patient.lastName}`;
  return (
    <>
      <PageHeader
        title={`New order for ${name}`}
        description={`Born ${formatDate(d.patient.dateOfBirth)}.`}
        actions={
          <Link to="/orders/new" className="text-sm font-semibold text-accent-700 underline underline-offset-4">
            Another patient
          </Link>
        }
      />
      {d.step === "prescription" || !d.rx ? (
        <Card title="Choose the prescription">
          {d.prescriptions.length === 0 ? (
            <p className="text-muted">
              This patient has no prescription yet. Orders are made from an issued prescription.
            </p>
          ) : (
            <ul className="divide-y divide-line">
              {d.prescriptions.map((p) => (
                <li key={p.id} className="flex flex-wrap items-center justify-between gap-3 py-3">
                  <div>
                    <p className="font-semibold">
                      {p.kind === "spectacle" ? "Spectacle" : `Contact lens${p.lensName ? ` (${p.lensName})` : ""}`}{" "}
                      prescription of {formatDate(p.issuedAt.slice(0, 10))}
                    </p>
                    <p className="text-sm text-muted">
                      {p.eyes
                        .map(
                          (e) =>
                            `${e.eye === "right" ? "R" : "L"} ${formatRx(e)}${e.addPower ? ` add +${e.addPower.toFixed(2)}` : ""}`,
                        )
                        .join(" · ")}{" "}
                      · {p.expired ? `expired ${formatDate(p.expiresOn)}` : `valid until ${formatDate(p.expiresOn)}`}
                    </p>
                  </div>
                  {p.expired ? (
                    <span className="text-sm font-semibold">Expired — a new exam is needed</span>
                  ) : (
                    <Link
                      to={`/orders/new?patientId=${d.patient.id}&prescriptionId=${p.id}`}
                      className="rounded-md border border-accent-700 px-3 py-1.5 text-sm font-semibold text-accent-700"
                      aria-label={`${p.kind === "spectacle" ? "Order spectacles" : "Order lenses"} from the prescription of ${formatDate(p.issuedAt.slice(0, 10))}`}
                    >
                      {p.kind === "spectacle" ? "Order spectacles" : "Order lenses"}
                    </Link>
                  )}
                </li>
              ))}
            </ul>
          )}
        </Card>
      ) : (
        <>
          <Card title="From the prescription" className="mb-6">
            <RxSummary rx={d.rx} />
            <p className="mt-2 text-sm text-muted">
              Check the prescription before ordering; local law and licensed practice govern dispensing.
            </p>
          </Card>
          {d.rx.kind === "spectacle" ? (
            <SpectacleForm d={d as FormData_} lastResult={actionData} />
          ) : (
            <ContactLensForm d={d as FormData_} lastResult={actionData} />
          )}
        </>
      )}
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "New order · Dioptra" }];
