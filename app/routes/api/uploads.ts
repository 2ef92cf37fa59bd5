import type { Route } from "./+types/uploads";
import {
  DOCUMENT_KINDS,
  MAX_UPLOAD_BYTES,
  saveUpload,
  UploadError,
  type DocumentKind,
  uploadTarget,
} from "~/models/patients/documents.server";
import { CLINICAL_ROLES, requireRole } from "~/utils/auth.server";

const fail = (status: number, message: string, field?: string) =>
  Response.json({ ok: false, message, field }, { status });

/** POST /api/uploads (multipart: patientId, examId?, kind, description, file) — clinical roles only. */
export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, CLINICAL_ROLES);
  if (request.method !== "POST") return fail(405, "Use POST.");
  const declared = Number(request.headers.get("content-length") ?? "0");
  if (declared > MAX_UPLOAD_BYTES + 64 * 1024)
    return fail(413, `The file is larger than the ${MAX_UPLOAD_BYTES / 1024 / 1024} MB limit.`, "file");
  let form: FormData;
  try {
    form = await request.formData();
  } catch {
    return fail(400, "Send the file as multipart/form-data.", "file");
  }
  const patientId = String(form.get("patientId") ?? "");
  const examIdRaw = String(form.get("examId") ?? "");
  const kind = String(form.get("kind") ?? "") as DocumentKind;
  const description = String(form.get("description") ?? "")
    .trim()
    .slice(0, 500);
  const file = form.get("file");
  const target = await uploadTarget(patientId, examIdRaw);
  if (!target) return fail(404, "Not found.");
  const { examId } = target;
  if (!Object.hasOwn(DOCUMENT_KINDS, kind)) return fail(400, "Choose what kind of document this is.", "kind");
  if (!(file instanceof File)) return fail(400, "Choose a file to attach.", "file");
  try {
    const id = await saveUpload(user, { patientId, examId, kind, description, file }, request);
    return Response.json({ ok: true, id }, { status: 201 });
  } catch (e) {
    if (e instanceof UploadError) return fail(e.status, e.message, e.field);
    throw e;
  }
}

export async function loader() {
  return fail(405, "Use POST.");
}
