import { z } from "zod";
import type { Route } from "./+types/recall-progress";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { batchProgress } from "~/models/schedule/recalls.server";

/** GET /schedule/recalls/batches/:batchId — progress of a bulk recall send, for the progress bar. */
export async function loader({ request, params }: Route.LoaderArgs) {
  await requireRole(request, STAFF_ROLES);
  const progress = z.uuid().safeParse(params.batchId).success ? await batchProgress(params.batchId) : null;
  if (!progress) return Response.json({ error: "No such batch." }, { status: 404 });
  return Response.json(progress);
}
