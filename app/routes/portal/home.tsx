import { eq } from "drizzle-orm";
import { data } from "react-router";
import type { Route } from "./+types/home";
import { PageHeader } from "~/components/page-header";
import { Card } from "~/components/ui/card";
import { patients, practiceSettings } from "~/db/schema";
import { audit } from "~/utils/audit.server";
import { requireRole } from "~/utils/auth.server";
import { db } from "~/utils/db.server";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireRole(request, ["patient"]);
  if (!user.patientId) throw data({ error: "This account is not linked to a patient record. Please contact the practice." }, { status: 404 });
  const [patient] = await db
    .select({ firstName: patients.firstName, lastName: patients.lastName, dateOfBirth: patients.dateOfBirth, email: patients.email, phone: patients.phone, remindersByEmail: patients.remindersByEmail })
    .from(patients)
    .where(eq(patients.id, user.patientId));
  if (!patient) throw data({ error: "Not found." }, { status: 404 });
  const [practice] = await db.select({ name: practiceSettings.name, phone: practiceSettings.phone, email: practiceSettings.email }).from(practiceSettings).limit(1);
  await audit({ action: "portal.read", actorUserId: user.id, patientId: user.patientId, entityType: "patient", entityId: user.patientId, request });
  return { patient, practice };
}

export default function PortalHome({ loaderData }: Route.ComponentProps) {
  const { patient, practice } = loaderData;
  return (
    <div className="mx-auto max-w-2xl">
      <PageHeader title={`Hello, ${patient.firstName}`} description={practice ? `Your page at ${practice.name}` : undefined} />
      <Card title="Your details">
        <dl className="grid grid-cols-[8rem_1fr] gap-y-2 text-sm">
          <dt className="text-muted">Name</dt>
          <dd className="font-semibold">
            {patient.firstName} {patient.lastName}
          </dd>
          <dt className="text-muted">Date of birth</dt>
          <dd>{new Date(`${patient.dateOfBirth}T12:00:00Z`).toLocaleDateString("en-GB", { dateStyle: "long" })}</dd>
          <dt className="text-muted">E-mail</dt>
          <dd>{patient.email ?? "—"}</dd>
          <dt className="text-muted">Phone</dt>
          <dd>{patient.phone ?? "—"}</dd>
          <dt className="text-muted">Reminders</dt>
          <dd>{patient.remindersByEmail ? "By e-mail" : "Off"}</dd>
        </dl>
        {practice ? (
          <p className="mt-4 text-sm text-muted">
            To change these details, contact {practice.name}
            {practice.phone ? ` on ${practice.phone}` : ""}
            {practice.email ? ` or ${practice.email}` : ""}.
          </p>
        ) : null}
      </Card>
    </div>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "My visits · Dioptra" }];
