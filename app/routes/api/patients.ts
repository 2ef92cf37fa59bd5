import type { Route } from "./+types/patients";
import { searchPatients } from "~/models/patients/patients.server";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";

/** GET /api/patients?q= — typeahead search by any part of the name, date of birth, phone or e-mail. */
export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, STAFF_ROLES);
  const q = (new URL(request.url).searchParams.get("q") ?? "").slice(0, 100);
  const results = await searchPatients(q, 8);
  return Response.json({ q, results });
}
