/**
 * Forms validated only on the server (the signed-out pages, which ship no validation library):
 * reading an action's reply — conform's `submission.reply()`, plain JSON — for errors and the
 * values to show again. Imports nothing at run time, so a page using it stays small.
 */
export type ServerReply =
  { error?: Record<string, string[] | null> | null; initialValue?: Record<string, unknown> | null } | null | undefined;

/** The errors of one field, or the form's own (name ""). */
export function replyErrors(reply: ServerReply, name: string): string[] | undefined {
  const errors = reply?.error?.[name];
  return errors?.length ? errors : undefined;
}

/** What was typed into a field, as the server sent it back (never for hidden fields like passwords). */
export function replyValue(reply: ServerReply, name: string): string | undefined {
  const value = reply?.initialValue?.[name];
  return typeof value === "string" ? value : undefined;
}

/** Props of a text-like input of a server-validated form: its id, name and last value. */
export function serverInput(formId: string, reply: ServerReply, name: string, type = "text") {
  return { id: `${formId}-${name}`, name, type, defaultValue: replyValue(reply, name) };
}
