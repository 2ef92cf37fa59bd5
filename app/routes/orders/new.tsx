import { getFormProps, getInputProps, getSelectProps, getTextareaProps, useForm } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { eq } from "drizzle-orm";
import { data, Form, Link, useNavigation } from "react-router";
import type { Route } from "./+types/new";
import { ErrorList, Field, SelectField } from "~/components/forms";
import { PageHeader } from "~/components/page-header";
import { matchCount } from "~/components/patient-search";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input, Textarea } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";
import { patients } from "~/db/schema";
import { formatMoney } from "~/lib/money";
import { formatRx } from "~/lib/optics";
import { COATINGS, LENS_MATERIALS, LENS_TYPE_LABEL } from "~/lib/orders/states";
import {
  activeFrames,
  activeLabs,
  createContactLensOrder,
  createSpectacleOrder,
  itemFees,
  ORDER_ROLES,
  orderablePrescriptions,
  OrderError,
  practiceOrderSettings,
} from "~/models/orders/orders.server";
import { formatDate, isUuid } from "~/routes/patients/patient-schema";
import { searchPatientsPage } from "~/routes/patients/patients.server";
import { requireRole } from "~/utils/auth.server";
import { db } from "~/utils/db.server";
import { redirectWithToast } from "~/utils/toast.server";
import { contactLensOrderSchema, spectacleOrderSchema } from "./order-schema";

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
  const [patient] = await db
    .select({
      id: patients.id,
      firstName: patients.firstName,
      lastName: patients.lastName,
      dateOfBirth: patients.dateOfBirth,
    })
    .from(patients)
    .where(eq(patients.id, patientId));
  if (!patient) throw data({ error: "There is no such patient." }, { status: 404 });
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

type FormData_ = Exclude<Route.ComponentProps["loaderData"], { step: "patient" }>;

function RxSummary({ rx }: { rx: NonNullable<FormData_["rx"]> }) {
  return (
    <dl className="grid gap-1 text-sm sm:grid-cols-2">
      {rx.eyes.map((e) => (
        <div key={e.eye}>
          <dt className="inline font-semibold">{e.eye === "right" ? "Right" : "Left"}: </dt>
          <dd className="inline">
            {formatRx(e)}
            {e.addPower ? ` Add +${e.addPower.toFixed(2)}` : ""}
            {e.prismDioptres ? ` · ${e.prismDioptres.toFixed(2)} Δ base ${e.prismBase}` : ""}
          </dd>
        </div>
      ))}
    </dl>
  );
}

/** The form's own errors and any error of a field that has no place of its own on the page (e.g. the prescription). */
function UnplacedErrors({
  all,
  placed,
  formErrors,
}: {
  all: Record<string, string[]>;
  placed: string[];
  formErrors?: string[];
}) {
  const shown = new Set(placed.filter((p) => !["kind", "prescriptionId", "coatings"].includes(p)));
  const rest = Object.entries(all)
    .filter(([k]) => k !== "" && !shown.has(k))
    .flatMap(([k, v]) => v.map((m) => `${k}: ${m}`));
  const messages = [...(formErrors ?? []), ...rest];
  return messages.length ? (
    <Notice tone="error" title="Not saved">
      {messages.join(" ")}
    </Notice>
  ) : null;
}

function SpectacleForm({ d, lastResult }: { d: FormData_; lastResult: unknown }) {
  const navigation = useNavigation();
  const [form, fields] = useForm({
    id: "spectacle-order",
    lastResult: navigation.state === "idle" ? (lastResult as never) : null,
    defaultValue: {
      kind: "spectacles",
      prescriptionId: d.rx!.id,
      lensType: d.rx!.eyes.some((e) => e.addPower) ? "varifocal" : "single_vision",
      lensMaterial: LENS_MATERIALS[0],
      coatings: ["Hard coat", "Anti-reflection"],
    },
    onValidate: ({ formData }) => parseWithZod(formData, { schema: spectacleOrderSchema }),
    shouldValidate: "onBlur",
  });
  const coatings = new Set((fields.coatings.initialValue as string[] | undefined) ?? []);
  return (
    <Form method="post" {...getFormProps(form)} className="space-y-6">
      <input type="hidden" name="kind" value="spectacles" />
      <input type="hidden" name="prescriptionId" value={d.rx!.id} />
      <UnplacedErrors all={form.allErrors} placed={Object.keys(fields)} formErrors={form.errors} />
      <Card title="Frame and lab">
        <div className="grid gap-4 sm:grid-cols-2">
          <SelectField
            label="Frame from stock"
            errors={fields.frameId.errors}
            selectProps={getSelectProps(fields.frameId)}
          >
            <option value="">Choose a frame…</option>
            {d.frames.map((f) => (
              <option key={f.id} value={f.id}>
                {f.label} — {formatMoney(f.priceMinor, d.currency)} —{" "}
                {f.quantity > 0 ? `${f.quantity} in stock` : "out of stock"}
              </option>
            ))}
          </SelectField>
          <SelectField label="Lab" errors={fields.labId.errors} selectProps={getSelectProps(fields.labId)}>
            <option value="">Choose a lab…</option>
            {d.labs.map((l) => (
              <option key={l.id} value={l.id}>
                {l.name}
              </option>
            ))}
          </SelectField>
        </div>
      </Card>
      <Card title="Lenses">
        <div className="grid gap-4 sm:grid-cols-2">
          <SelectField label="Lens type" errors={fields.lensType.errors} selectProps={getSelectProps(fields.lensType)}>
            {Object.entries(LENS_TYPE_LABEL).map(([k, label]) => (
              <option key={k} value={k}>
                {label}
              </option>
            ))}
          </SelectField>
          <SelectField
            label="Material and index"
            errors={fields.lensMaterial.errors}
            selectProps={getSelectProps(fields.lensMaterial)}
          >
            {LENS_MATERIALS.map((m) => (
              <option key={m} value={m}>
                {m}
              </option>
            ))}
          </SelectField>
          <fieldset>
            <legend className="mb-1 text-sm font-semibold">Coatings</legend>
            <div className="flex flex-wrap gap-x-4 gap-y-1">
              {COATINGS.map((c) => (
                <label key={c} className="flex items-center gap-2 text-sm">
                  <input
                    type="checkbox"
                    name="coatings"
                    value={c}
                    defaultChecked={coatings.has(c)}
                    className="size-4"
                  />
                  {c}
                </label>
              ))}
            </div>
          </fieldset>
          <Field
            label="Tint"
            hint="Leave empty for none, e.g. grey 15 %."
            errors={fields.tint.errors}
            inputProps={getInputProps(fields.tint, { type: "text" })}
          />
          <SelectField
            label="Lens price (fee schedule)"
            errors={fields.lensFeeItemId.errors}
            selectProps={getSelectProps(fields.lensFeeItemId)}
          >
            <option value="">Choose…</option>
            {d.fees.map((f) => (
              <option key={f.id} value={f.id}>
                {f.label} — {formatMoney(f.priceMinor, d.currency)}
              </option>
            ))}
          </SelectField>
        </div>
      </Card>
      <Card title="Centration">
        <div className="grid gap-4 sm:grid-cols-4">
          <Field
            label="Right monocular PD (mm)"
            errors={fields.pdRightMm.errors}
            inputProps={{ ...getInputProps(fields.pdRightMm, { type: "text" }), inputMode: "decimal" }}
          />
          <Field
            label="Left monocular PD (mm)"
            errors={fields.pdLeftMm.errors}
            inputProps={{ ...getInputProps(fields.pdLeftMm, { type: "text" }), inputMode: "decimal" }}
          />
          <Field
            label="Right fitting height (mm)"
            hint="Needed for bifocal, varifocal and occupational lenses."
            errors={fields.heightRightMm.errors}
            inputProps={{ ...getInputProps(fields.heightRightMm, { type: "text" }), inputMode: "decimal" }}
          />
          <Field
            label="Left fitting height (mm)"
            errors={fields.heightLeftMm.errors}
            inputProps={{ ...getInputProps(fields.heightLeftMm, { type: "text" }), inputMode: "decimal" }}
          />
        </div>
        <div className="mt-4">
          <label htmlFor={fields.notes.id} className="mb-1 block text-sm font-semibold">
            Notes for the lab
          </label>
          <Textarea {...getTextareaProps(fields.notes)} rows={2} />
          <ErrorList errors={fields.notes.errors} />
        </div>
      </Card>
      <Button type="submit" pending={navigation.state === "submitting"}>
        Save order
      </Button>
    </Form>
  );
}

function ContactLensForm({ d, lastResult }: { d: FormData_; lastResult: unknown }) {
  const navigation = useNavigation();
  const [form, fields] = useForm({
    id: "cl-order",
    lastResult: navigation.state === "idle" ? (lastResult as never) : null,
    defaultValue: { kind: "contact_lenses", prescriptionId: d.rx!.id, boxesRight: "1", boxesLeft: "1" },
    onValidate: ({ formData }) => parseWithZod(formData, { schema: contactLensOrderSchema }),
    shouldValidate: "onBlur",
  });
  return (
    <Form method="post" {...getFormProps(form)} className="space-y-6">
      <input type="hidden" name="kind" value="contact_lenses" />
      <input type="hidden" name="prescriptionId" value={d.rx!.id} />
      <UnplacedErrors all={form.allErrors} placed={Object.keys(fields)} formErrors={form.errors} />
      <Card title={`Lens: ${d.rx!.lensName || "as prescribed"}`}>
        <div className="grid gap-4 sm:grid-cols-2">
          <SelectField label="Supplier" errors={fields.labId.errors} selectProps={getSelectProps(fields.labId)}>
            <option value="">Choose…</option>
            {d.labs.map((l) => (
              <option key={l.id} value={l.id}>
                {l.name}
              </option>
            ))}
          </SelectField>
          <SelectField
            label="Price per box (fee schedule)"
            errors={fields.lensFeeItemId.errors}
            selectProps={getSelectProps(fields.lensFeeItemId)}
          >
            <option value="">Choose…</option>
            {d.fees.map((f) => (
              <option key={f.id} value={f.id}>
                {f.label} — {formatMoney(f.priceMinor, d.currency)}
              </option>
            ))}
          </SelectField>
          <Field
            label="Boxes, right eye"
            errors={fields.boxesRight.errors}
            inputProps={getInputProps(fields.boxesRight, { type: "number" })}
          />
          <Field
            label="Boxes, left eye"
            errors={fields.boxesLeft.errors}
            inputProps={getInputProps(fields.boxesLeft, { type: "number" })}
          />
        </div>
        <div className="mt-4">
          <label htmlFor={fields.notes.id} className="mb-1 block text-sm font-semibold">
            Notes for the supplier
          </label>
          <Textarea {...getTextareaProps(fields.notes)} rows={2} />
        </div>
      </Card>
      <Button type="submit" pending={navigation.state === "submitting"}>
        Save order
      </Button>
    </Form>
  );
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
