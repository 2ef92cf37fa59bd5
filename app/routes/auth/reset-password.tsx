import { parseWithZod } from "@conform-to/zod/v4";
import { data, Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import { passwordSchema } from "~/utils/auth-schemas";
import type { Route } from "./+types/reset-password";
import { AuthCard } from "~/components/auth-card";
import { Field } from "~/components/forms";
import { replyErrors, serverInput } from "~/components/server-form";
import { Button } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { setPasswordWithToken } from "~/models/users/password-reset.server";
import { readForm } from "~/utils/form.server";
import { redirectWithToast } from "~/utils/toast.server";
import { peekUserToken } from "~/utils/tokens.server";

const schema = z
  .object({
    token: z.string().min(1),
    password: passwordSchema,
    confirm: z.string({ error: "Type the password again." }),
  })
  .refine((v) => v.password === v.confirm, { message: "The two passwords differ.", path: ["confirm"] });

export async function loader({ request }: Route.LoaderArgs) {
  const token = new URL(request.url).searchParams.get("token") ?? "";
  const live = await peekUserToken(token);
  return { token, valid: Boolean(live), purpose: live?.purpose ?? null, email: live?.email ?? null };
}

export async function action({ request }: Route.ActionArgs) {
  const submission = parseWithZod(await readForm(request), { schema });
  if (submission.status !== "success") {
    return data(submission.reply({ hideFields: ["password", "confirm"] }), { status: 400 });
  }
  if (!(await setPasswordWithToken(submission.value.token, submission.value.password, request))) {
    return data(
      submission.reply({
        formErrors: ["This link has expired or has already been used. Ask for a new one."],
        hideFields: ["password", "confirm"],
      }),
      { status: 400 },
    );
  }
  return redirectWithToast("/login", {
    kind: "success",
    title: "Password saved",
    description: "Sign in with your new password.",
  });
}

export default function ResetPassword({ loaderData, actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  // Checked by the server only: the page ships no validation code.
  const formErrors = replyErrors(actionData, "");
  const title = loaderData.purpose === "invite" ? "Set your password" : "Choose a new password";
  return (
    <AuthCard title={loaderData.valid ? title : "This link no longer works"}>
      {loaderData.valid ? (
        <Form method="post" id="reset-password" noValidate className="mt-6 space-y-4">
          <p className="text-sm text-muted">For {loaderData.email}</p>
          {formErrors ? (
            <Notice tone="error" title="Password not saved" id="reset-password-form-error">
              {formErrors.join(" ")}
            </Notice>
          ) : null}
          <input type="hidden" name="token" value={loaderData.token} />
          <Field
            label="New password"
            hint="At least 10 characters."
            errors={replyErrors(actionData, "password")}
            inputProps={{
              ...serverInput("reset-password", actionData, "password", "password"),
              autoComplete: "new-password",
            }}
          />
          <Field
            label="Type it again"
            errors={replyErrors(actionData, "confirm")}
            inputProps={{
              ...serverInput("reset-password", actionData, "confirm", "password"),
              autoComplete: "new-password",
            }}
          />
          <Button type="submit" className="w-full" pending={navigation.state === "submitting"}>
            Save password
          </Button>
        </Form>
      ) : (
        <div className="mt-4 space-y-4">
          <Notice tone="error" title="Expired or already used">
            Reset and invitation links work once and for a limited time. Ask for a new one.
          </Notice>
          <Link to="/forgot-password" className="font-semibold text-accent-700 underline underline-offset-4">
            Send me a new reset link
          </Link>
        </div>
      )}
    </AuthCard>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Choose a password · Dioptra" }];
