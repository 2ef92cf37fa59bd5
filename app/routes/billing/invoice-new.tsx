import { activeFees } from "~/models/settings/fees.server";
import { data, Form, Link, redirect, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/invoice-new";
import {
  appointmentForInvoice,
  examPatientForInvoice,
  newInvoiceCurrency,
  patientForInvoice,
} from "~/models/billing/invoice-start.server";
import { BillingNav } from "~/components/billing/invoice-status";
import { ErrorList } from "~/components/forms";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { PageHeader } from "~/components/page-header";
import { FeeTable } from "./invoice-fee-table";
import { PatientSearch, type PatientSearchHit } from "~/components/patient-search";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input, Select } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";
import { formatDate } from "~/lib/format";
import { parseMoney } from "~/lib/money";
import { parseDecimal } from "~/lib/numbers/decimal";
import { audit } from "~/utils/audit.server";
import { requireRole } from "~/utils/auth.server";
import { redirectWithToast } from "~/utils/toast.server";
import {
  BILLING_ROLES,
  BillingError,
  createInvoice,
  examForInvoice,
  type NewLine,
} from "~/models/billing/invoices.server";
import { notFound } from "~/utils/failure.server";

const baseSchema = z.object({
  patientId: z.uuid({ error: "Choose a patient." }),
  examId: z.union([z.literal(""), z.uuid()]).optional(),
  customDescription: z.string().trim().max(120).default(""),
  customPrice: z.string().trim().max(20).default(""),
  customTax: z.enum(["standard", "exempt"]).default("standard"),
  customQty: z.string().trim().max(4).default("1"),
});

type Errors = Partial<Record<"patientId" | "lines" | "custom" | "form" | string, string[]>>;

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireRole(request, BILLING_ROLES);
  const url = new URL(request.url);
  const examId = url.searchParams.get("exam");
  const currency = await newInvoiceCurrency();
  const fees = await activeFees({ servicesFirst: true });
  let exam: Awaited<ReturnType<typeof examForInvoice>> = null;
  let patient: { id: string; name: string } | null = null;
  if (examId) {
    if (!z.uuid().safeParse(examId).success) notFound("There is no such exam.");
    exam = await examForInvoice(examId);
    if (!exam) notFound("There is no such exam.");
    patient = await examPatientForInvoice(exam.patientId);
    await audit({
      action: "billing.exam_opened_for_invoice",
      actorUserId: user.id,
      entityType: "exam",
      entityId: exam.id,
      patientId: exam.patientId,
      request,
    });
  }
  // From an appointment: its exam's invoice if it has one, else the patient with the type's fee.
  const appointmentId = url.searchParams.get("appointment");
  let appointment: { id: string; typeName: string; startsAt: string; timeZone: string } | null = null;
  let suggestedFeeItemId: string | null = exam?.defaultFeeItemId ?? null;
  let preselected: PatientSearchHit | null = null;
  let preselectedId = url.searchParams.get("patient") ?? "";
  if (!exam && appointmentId) {
    if (!z.uuid().safeParse(appointmentId).success) notFound("There is no such appointment.");
    const appt = await appointmentForInvoice(appointmentId);
    if (!appt) notFound("There is no such appointment.");
    if (appt.examId) throw redirect(`/billing/invoices/new?exam=${appt.examId}`);
    appointment = {
      id: appt.id,
      typeName: appt.typeName,
      startsAt: appt.startsAt.toISOString(),
      timeZone: appt.timeZone,
    };
    suggestedFeeItemId = appt.feeItemId;
    preselectedId = appt.patientId;
  }
  if (!exam && z.uuid().safeParse(preselectedId).success) {
    preselected = await patientForInvoice(preselectedId);
  }
  return {
    currency,
    fees,
    exam: exam
      ? {
          id: exam.id,
          completed: exam.completed,
          examinedAt: exam.examinedAt.toISOString(),
          timeZone: exam.timeZone,
          appointmentType: exam.appointmentType,
          defaultFeeItemId: exam.defaultFeeItemId,
          existingInvoice: exam.existingInvoice,
        }
      : null,
    patient,
    appointment,
    suggestedFeeItemId,
    preselected,
  };
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, BILLING_ROLES);
  const form = await request.formData();
  const parsed = baseSchema.safeParse(Object.fromEntries([...form.entries()].filter(([k]) => !k.startsWith("qty_"))));
  const errors: Errors = {};
  if (!parsed.success) {
    for (const issue of parsed.error.issues) (errors[String(issue.path[0] ?? "form")] ??= []).push(issue.message);
    return data({ errors }, { status: 400 });
  }
  const v = parsed.data;
  const currency = await newInvoiceCurrency();
  const lines: NewLine[] = [];
  for (const [key, raw] of form.entries()) {
    if (!key.startsWith("qty_")) continue;
    const feeItemId = key.slice(4);
    const text = String(raw).trim();
    if (text === "" || text === "0") continue;
    const qty = parseDecimal(text);
    if (!z.uuid().safeParse(feeItemId).success || qty === null || !Number.isInteger(qty) || qty < 0 || qty > 1000) {
      (errors[key] ??= []).push("A whole number from 0 to 1000.");
      continue;
    }
    lines.push({ feeItemId, quantity: qty });
  }
  if (v.customDescription || v.customPrice) {
    const price = parseMoney(v.customPrice, currency);
    const qty = v.customQty ? (parseDecimal(v.customQty) ?? NaN) : 1;
    if (!v.customDescription) (errors.customDescription ??= []).push("Describe the extra line.");
    if (price === null) (errors.customPrice ??= []).push(`Give the price in ${currency}, e.g. 12.50.`);
    if (!Number.isInteger(qty) || qty < 1 || qty > 1000)
      (errors.customQty ??= []).push("A whole number from 1 to 1000.");
    if (v.customDescription && price !== null && Number.isInteger(qty) && qty >= 1)
      lines.push({
        custom: {
          description: v.customDescription,
          unitPriceMinor: price,
          taxCategory: v.customTax,
          kind: v.customTax === "standard" ? "item" : "service",
        },
        quantity: qty,
      });
  }
  if (!lines.length && !Object.keys(errors).length)
    errors.lines = ["Pick at least one fee (a quantity of 1 or more), or add an extra line."];
  if (Object.keys(errors).length) return data({ errors }, { status: 400 });
  if (v.examId) {
    const exam = await examForInvoice(v.examId);
    if (!exam) return data({ errors: { form: ["There is no such exam."] } }, { status: 400 });
    if (!exam.completed)
      return data(
        {
          errors: {
            form: [
              "This exam is not finished yet: it must be signed (or its appointment completed) before it is invoiced.",
            ],
          },
        },
        { status: 400 },
      );
  }
  try {
    const id = await createInvoice({
      patientId: v.patientId,
      examId: v.examId || null,
      lines,
      actorUserId: user.id,
      request,
    });
    return redirectWithToast(`/billing/invoices/${id}`, {
      kind: "success",
      title: "Draft invoice created",
      description: "Check the lines, then issue it.",
    });
  } catch (error) {
    if (error instanceof BillingError)
      return data(
        { errors: { [error.field ?? "form"]: [error.message] } },
        { status: error.status === 409 ? 409 : 400 },
      );
    throw error;
  }
}

export default function NewInvoice({ loaderData, actionData }: Route.ComponentProps) {
  const { fees, currency, exam, patient, appointment, suggestedFeeItemId, preselected } = loaderData;
  const errors: Errors = (actionData as { errors?: Errors } | undefined)?.errors ?? {};
  const navigation = useNavigation();
  const services = fees.filter((f) => f.kind === "service");
  const items = fees.filter((f) => f.kind === "item");
  const examDate = exam ? formatDate(exam.examinedAt, { style: "long", timeZone: exam.timeZone }) : "";
  const suggested = {
    id: suggestedFeeItemId,
    note: exam ? "this exam's visit fee" : "this appointment's fee",
  };

  return (
    <>
      <PageHeader
        title="New invoice"
        description={
          exam
            ? `From the exam of ${patient?.name ?? "the patient"} on ${examDate}.`
            : appointment
              ? `From the ${appointment.typeName} appointment of ${formatDate(appointment.startsAt, { style: "long", timeZone: appointment.timeZone })}: ${
                  suggestedFeeItemId
                    ? "its fee is filled in below."
                    : "this kind of appointment has no fee set, so choose what to charge below."
                }`
              : "Raise an invoice by hand, or open one from a finished exam."
        }
      />
      <BillingNav />
      <Form method="post" className="space-y-6" aria-describedby={errors.form ? "form-error" : undefined}>
        {errors.form || errors.lines ? (
          <Notice tone="error" title="Not created" id="form-error">
            {[...(errors.form ?? []), ...(errors.lines ?? [])].join(" ")}
          </Notice>
        ) : null}
        {exam && !exam.completed ? (
          <Notice tone="warning" title="This exam is not finished">
            It has to be signed by the optometrist (or its appointment marked completed) before it can be invoiced.
          </Notice>
        ) : null}
        {exam?.existingInvoice ? (
          <Notice tone="info" title="Already invoiced">
            This exam already has an invoice:{" "}
            <Link to={`/billing/invoices/${exam.existingInvoice.id}`} className="font-semibold underline">
              open it
            </Link>
            .
          </Notice>
        ) : null}
        <Card title="Patient">
          {exam && patient ? (
            <>
              <input type="hidden" name="patientId" value={patient.id} />
              <input type="hidden" name="examId" value={exam.id} />
              <p>
                <span className="font-semibold">{patient.name}</span> · exam of {examDate}
                {exam.appointmentType ? ` · ${exam.appointmentType}` : ""}
              </p>
            </>
          ) : (
            <div className="max-w-lg">
              <PatientSearch
                label="Patient"
                name="patientId"
                initial={preselected}
                invalid={Boolean(errors.patientId)}
                describedBy={errors.patientId ? "patientId-error" : undefined}
              />
              <ErrorList id="patientId-error" errors={errors.patientId} />
            </div>
          )}
        </Card>
        <Card title="Services performed">
          <FeeTable
            fees={services}
            currency={currency}
            caption="Services"
            empty="No services in the fee schedule yet."
            suggested={suggested}
            errors={errors}
          />
        </Card>
        <Card title="Dispensed items">
          <FeeTable
            fees={items}
            currency={currency}
            caption="Dispensed items"
            empty="No items in the fee schedule yet."
            suggested={suggested}
            errors={errors}
          />
        </Card>
        <Card title="Extra line (optional)">
          <div className="grid gap-4 sm:grid-cols-[2fr_1fr_1fr_1fr]">
            <div>
              <label htmlFor="customDescription" className="mb-1 block text-sm font-semibold">
                Description
              </label>
              <Input
                id="customDescription"
                name="customDescription"
                aria-invalid={errors.customDescription ? true : undefined}
              />
              <ErrorList errors={errors.customDescription} />
            </div>
            <div>
              <label htmlFor="customPrice" className="mb-1 block text-sm font-semibold">
                Unit price ({currency})
              </label>
              <Input
                id="customPrice"
                name="customPrice"
                inputMode="decimal"
                aria-invalid={errors.customPrice ? true : undefined}
              />
              <ErrorList errors={errors.customPrice} />
            </div>
            <div>
              <label htmlFor="customQty" className="mb-1 block text-sm font-semibold">
                Quantity
              </label>
              <Input
                id="customQty"
                name="customQty"
                type="number"
                min={1}
                defaultValue={1}
                aria-invalid={errors.customQty ? true : undefined}
              />
              <ErrorList errors={errors.customQty} />
            </div>
            <div>
              <label htmlFor="customTax" className="mb-1 block text-sm font-semibold">
                Tax
              </label>
              <Select id="customTax" name="customTax" defaultValue="standard">
                <option value="standard">Standard rate</option>
                <option value="exempt">Exempt</option>
              </Select>
            </div>
          </div>
        </Card>
        <Button
          type="submit"
          pending={navigation.state === "submitting"}
          disabled={Boolean(exam && (!exam.completed || exam.existingInvoice))}
        >
          Create draft invoice
        </Button>
      </Form>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "New invoice · Dioptra" }];

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
