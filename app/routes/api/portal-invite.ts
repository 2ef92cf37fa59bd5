import { z } from "zod";
import type { Route } from "./+types/portal-invite";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { invitePatientToPortal, PortalInviteError } from "~/models/portal/portal-invite.server";

const schema = z.object({ patientId: z.uuid({ error: "patientId must be a patient's id." }) });

/** POST { patientId } (form or JSON): e-mails the patient an invitation to their online page. */
export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, STAFF_ROLES);
  const body = request.headers.get("content-type")?.includes("application/json")
    ? await request.json().catch(() => ({}))
    : Object.fromEntries(await request.formData());
  const parsed = schema.safeParse(body);
  if (!parsed.success)
    return Response.json(
      { error: "Check the fields.", fieldErrors: z.flattenError(parsed.error).fieldErrors },
      { status: 400 },
    );
  try {
    const { email } = await invitePatientToPortal(user, parsed.data.patientId, request);
    return Response.json({ ok: true, message: `Invitation sent to ${email}.` });
  } catch (error) {
    if (error instanceof PortalInviteError) return Response.json({ error: error.message }, { status: error.status });
    throw error;
  }
}
