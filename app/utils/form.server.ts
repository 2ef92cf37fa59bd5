import { data } from "react-router";

/**
 * The request's form. An empty body without a content type reads as an empty form; a body that
 * is not a form is refused with 415 and one that cannot be parsed with 400 (the root middleware
 * refuses both earlier; this keeps actions safe when called directly).
 */
export async function readForm(request: Request): Promise<FormData> {
  const type = (request.headers.get("content-type") ?? "").split(";")[0]!.trim().toLowerCase();
  if (!type) {
    const text = await request.text();
    if (!text) return new FormData();
    throw data({ error: "Send a form (application/x-www-form-urlencoded or multipart/form-data)." }, { status: 415 });
  }
  if (type !== "application/x-www-form-urlencoded" && type !== "multipart/form-data") {
    throw data({ error: "Send a form (application/x-www-form-urlencoded or multipart/form-data)." }, { status: 415 });
  }
  try {
    return await request.formData();
  } catch {
    throw data({ error: "The form in the body could not be read." }, { status: 400 });
  }
}
