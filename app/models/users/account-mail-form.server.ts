import { parseWithZod } from "@conform-to/zod/v4";
import { data } from "react-router";
import { z } from "zod";
import { readForm } from "~/utils/form.server";
import { requestAccountMail, type AccountMailKind } from "./account-mail.server";

const schema = z.object({
  email: z
    .string({ error: "Enter your e-mail address." })
    .trim()
    .toLowerCase()
    .pipe(z.email({ error: "Enter a valid e-mail address, like name@example.com." })),
});

/**
 * The action behind the two "e-mail me a link" forms (password reset, patient sign-in link):
 * checks the address, queues the mail, and answers the same whether or not an account exists,
 * so accounts cannot be discovered through the form. Too many asks get 429 with Retry-After.
 */
export async function accountMailFormAction(kind: AccountMailKind, request: Request) {
  const submission = parseWithZod(await readForm(request), { schema });
  if (submission.status !== "success") return data({ result: submission.reply(), sent: false }, { status: 400 });
  const queued = await requestAccountMail(kind, submission.value.email, request);
  if (!queued.ok) {
    return data(
      { result: submission.reply({ formErrors: [queued.message] }), sent: false },
      { status: queued.status, headers: { "retry-after": String(queued.retryAfterSeconds) } },
    );
  }
  return data({ result: submission.reply({ resetForm: true }), sent: true });
}
