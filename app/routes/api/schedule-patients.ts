import { z } from "zod";
import type { Route } from "./+types/schedule-patients";
import { DUPLICATE_MESSAGE, duplicatesBlockingRegistration, registerPatient } from "~/models/patients/patients.server";
import { errorJson, readBody, zodFieldErrors } from "~/models/schedule/schedule-api.server";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";

export const newPatientSchema = z.object({
  firstName: z.string({ error: "Give the first name." }).trim().min(1, "Give the first name.").max(80),
  lastName: z.string({ error: "Give the last name." }).trim().min(1, "Give the last name.").max(80),
  dateOfBirth: z.iso
    .date({ error: "Give the date of birth (YYYY-MM-DD)." })
    .refine(
      (d) => d <= new Date().toISOString().slice(0, 10) && d >= "1900-01-01",
      "The date of birth must be in the past.",
    ),
  email: z.union([z.literal(""), z.email({ error: "Enter a valid e-mail address." })]).optional(),
  phone: z.string().trim().max(40).optional(),
  /** "yes" once the user has seen the duplicate warning and registers a different person anyway. */
  confirmDuplicate: z.union([z.literal("yes"), z.literal(""), z.boolean()]).optional(),
});

/**
 * POST /api/schedule-patients — registers a new patient from the booking dialog (the dialog
 * finds existing patients with the patients list's own search, GET /api/patients?q=).
 */
export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, STAFF_ROLES);
  const parsed = newPatientSchema.safeParse(await readBody(request));
  if (!parsed.success) return errorJson(400, "Check the patient's details.", zodFieldErrors(parsed.error));
  const v = parsed.data;
  // The same check and words as the registration page.
  const duplicates = await duplicatesBlockingRegistration(v, v.confirmDuplicate);
  if (duplicates.length) return errorJson(409, DUPLICATE_MESSAGE, {}, { duplicates });
  const patient = await registerPatient(
    user,
    { firstName: v.firstName, lastName: v.lastName, dateOfBirth: v.dateOfBirth, email: v.email, phone: v.phone },
    null,
    {
      action: "patient.registered",
      detail: { from: "booking", duplicateConfirmed: v.confirmDuplicate === "yes" || v.confirmDuplicate === true },
    },
    request,
  );
  return Response.json({ patient: { ...patient, name: `${patient.firstName} ${patient.lastName}` } }, { status: 201 });
}
