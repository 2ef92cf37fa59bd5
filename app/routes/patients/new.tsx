import { parseWithZod } from "@conform-to/zod/v4";
import { data } from "react-router";
import type { Route } from "./+types/new";
import { PageHeader } from "~/components/page-header";
import { CLINICAL_ROLES, requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { redirectWithToast } from "~/utils/toast.server";
import { PatientForm, type PatientActionData } from "./patient-form";
import { patientSchema } from "~/models/patients/patient-schema";
import { DUPLICATE_MESSAGE, duplicatesBlockingRegistration, registerPatient } from "~/models/patients/patients.server";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireRole(request, STAFF_ROLES);
  return { clinical: (CLINICAL_ROLES as readonly string[]).includes(user.role) };
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, STAFF_ROLES);
  const submission = parseWithZod(await request.formData(), { schema: patientSchema });
  if (submission.status !== "success") return data(submission.reply(), { status: 400 });
  const { confirmDuplicate, allergies, medications, noKnownAllergies, ...demographics } = submission.value;
  const clinical = (CLINICAL_ROLES as readonly string[]).includes(user.role);
  const duplicates = await duplicatesBlockingRegistration(demographics, confirmDuplicate);
  if (duplicates.length)
    return data({ ...submission.reply({ formErrors: [DUPLICATE_MESSAGE] }), duplicates }, { status: 409 });
  const { id } = await registerPatient(
    user,
    demographics,
    clinical ? { allergies, medications, noKnownAllergies } : null,
    { action: "patient.created", detail: { duplicateConfirmed: confirmDuplicate === "yes" } },
    request,
  );
  return redirectWithToast(`/patients/${id}`, {
    kind: "success",
    title: `${demographics.firstName} ${demographics.lastName} registered`,
  });
}

export default function NewPatient({ loaderData, actionData }: Route.ComponentProps) {
  return (
    <>
      <PageHeader title="Register a patient" description="Name and date of birth are required; the rest can follow." />
      <PatientForm
        id="new-patient"
        lastResult={actionData as PatientActionData}
        clinical={loaderData.clinical}
        submitLabel="Register patient"
        defaultValue={{ remindersByEmail: "on" }}
      />
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Register a patient · Dioptra" }];
