import { parseWithZod } from "@conform-to/zod/v4";
import { data, Link } from "react-router";
import type { Route } from "./+types/edit";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { PageHeader } from "~/components/page-header";
import { audit } from "~/utils/audit.server";
import { CLINICAL_ROLES, requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { redirectWithToast } from "~/utils/toast.server";
import { PatientForm, type PatientActionData } from "./patient-form";
import { patientSchema } from "~/models/patients/patient-schema";
import { findDuplicates, patientOr404, updatePatient } from "~/models/patients/patients.server";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, STAFF_ROLES);
  const p = await patientOr404(params.patientId);
  const clinical = (CLINICAL_ROLES as readonly string[]).includes(user.role);
  if (clinical)
    await audit({
      action: "patient.clinical_read",
      actorUserId: user.id,
      entityType: "patient",
      entityId: p.id,
      patientId: p.id,
      detail: { fields: ["allergies", "medications"] },
      request,
    });
  return {
    clinical,
    patient: {
      id: p.id,
      firstName: p.firstName,
      lastName: p.lastName,
      dateOfBirth: p.dateOfBirth,
      sex: p.sex,
      email: p.email ?? "",
      phone: p.phone ?? "",
      addressLine1: p.addressLine1,
      city: p.city,
      postcode: p.postcode,
      guardianName: p.guardianName,
      guardianRelationship: p.guardianRelationship,
      guardianPhone: p.guardianPhone,
      guardianEmail: p.guardianEmail,
      remindersByEmail: p.remindersByEmail ? "on" : "",
      gpName: p.gpName,
      gpPractice: p.gpPractice,
      gpAddress: p.gpAddress,
      gpPhone: p.gpPhone,
      ...(clinical
        ? { allergies: p.allergies, medications: p.medications, noKnownAllergies: p.noKnownAllergies ? "on" : "" }
        : {}),
    },
  };
}

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requireRole(request, STAFF_ROLES);
  const existing = await patientOr404(params.patientId);
  const submission = parseWithZod(await request.formData(), { schema: patientSchema });
  if (submission.status !== "success") return data(submission.reply(), { status: 400 });
  const { confirmDuplicate, allergies, medications, noKnownAllergies, ...demographics } = submission.value;
  const clinical = (CLINICAL_ROLES as readonly string[]).includes(user.role);
  if (confirmDuplicate !== "yes") {
    const duplicates = await findDuplicates(demographics, existing.id);
    if (duplicates.length) {
      return data(
        {
          ...submission.reply({
            formErrors: ["Another patient with this name and date of birth is already registered."],
          }),
          duplicates,
        },
        { status: 409 },
      );
    }
  }
  await updatePatient(
    user,
    existing.id,
    demographics,
    clinical ? { allergies, medications, noKnownAllergies } : null,
    request,
  );
  return redirectWithToast(`/patients/${existing.id}`, { kind: "success", title: "Patient details saved" });
}

export default function EditPatient({ loaderData, actionData }: Route.ComponentProps) {
  const p = loaderData.patient;
  return (
    <>
      <PageHeader
        title={`Edit ${p.firstName} ${p.lastName}`}
        description={
          <Link to={`/patients/${p.id}`} className="underline">
            Back to the chart
          </Link>
        }
      />
      <PatientForm
        id="edit-patient"
        lastResult={actionData as PatientActionData}
        clinical={loaderData.clinical}
        submitLabel="Save details"
        defaultValue={p}
      />
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Edit patient · Dioptra" }];
export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
