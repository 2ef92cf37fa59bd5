import { parseWithZod } from "@conform-to/zod/v4";
import { data, Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/forgot-password";
import { AuthCard } from "~/components/auth-card";
import { Field } from "~/components/forms";
import { replyErrors, serverInput } from "~/components/server-form";
import { Button } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { requestAccountMail } from "~/models/users/account-mail.server";
import { readForm } from "~/utils/form.server";

const schema = z.object({
  email: z
    .string({ error: "Enter your e-mail address." })
    .trim()
    .toLowerCase()
    .pipe(z.email({ error: "Enter a valid e-mail address, like name@example.com." })),
});

export async function action({ request }: Route.ActionArgs) {
  const submission = parseWithZod(await readForm(request), { schema });
  if (submission.status !== "success") return data({ result: submission.reply(), sent: false }, { status: 400 });
  const queued = await requestAccountMail("reset", submission.value.email, request);
  if (!queued.ok) {
    return data(
      { result: submission.reply({ formErrors: [queued.message] }), sent: false },
      { status: queued.status, headers: { "retry-after": String(queued.retryAfterSeconds) } },
    );
  }
  return { result: submission.reply({ resetForm: true }), sent: true };
}

export default function ForgotPassword({ actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  // Checked by the server only: the page ships no validation code.
  const reply = actionData?.result;
  const formErrors = replyErrors(reply, "");
  return (
    <AuthCard title="Reset your password">
      <p className="mt-1 text-sm text-muted">
        We will e-mail you a link to choose a new one. It works once, for one hour.
      </p>
      {actionData?.sent ? (
        <div className="mt-6">
          <Notice tone="success" title="Check your e-mail">
            If an account exists for that address, a reset link is on its way.
          </Notice>
        </div>
      ) : null}
      <Form
        method="post"
        id="forgot-password"
        key={actionData?.sent ? "sent" : "open"}
        noValidate
        className="mt-6 space-y-4"
      >
        {formErrors ? (
          <Notice tone="error" title="Not sent" id="forgot-password-form-error">
            {formErrors.join(" ")}
          </Notice>
        ) : null}
        <Field
          label="E-mail"
          errors={replyErrors(reply, "email")}
          inputProps={{ ...serverInput("forgot-password", reply, "email", "email"), autoComplete: "email" }}
        />
        <Button type="submit" className="w-full" pending={navigation.state === "submitting"}>
          Send reset link
        </Button>
      </Form>
      <p className="mt-6 text-sm">
        <Link to="/login" className="font-semibold text-accent-700 underline underline-offset-4">
          Back to sign in
        </Link>
      </p>
    </AuthCard>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Reset password · Dioptra" }];
