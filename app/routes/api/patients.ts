import type { Route } from "./+types/patients";
import { searchPatientsPage } from "~/models/patients/patients.server";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";

/** Results per request; the list asks for the next ones with ?offset=. */
export const SEARCH_PAGE_SIZE = 20;

/**
 * GET /api/patients?q=&offset= — typeahead search by any part of the name, date of birth, phone
 * or e-mail: one page of matches, exact surnames first, and how many match in all.
 */
export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, STAFF_ROLES);
  const params = new URL(request.url).searchParams;
  const q = (params.get("q") ?? "").slice(0, 100);
  const offsetText = params.get("offset") ?? "0";
  if (!/^\d{1,4}$/.test(offsetText))
    return Response.json({ error: "The offset must be a whole number from 0 to 9999." }, { status: 400 });
  const offset = Number(offsetText);
  const page = await searchPatientsPage(q, { limit: SEARCH_PAGE_SIZE, offset });
  return Response.json({ q, offset, ...page });
}
