import { parseWithZod } from "@conform-to/zod/v4";
import { data, Form, Link, redirect, useNavigation } from "react-router";
import type { Route } from "./+types/login";
import { Field } from "~/components/forms";
import { replyErrors, serverInput } from "~/components/server-form";
import { Button } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { signInSchema } from "~/utils/auth-schemas";
import { authenticator, homeFor, SignInError } from "~/utils/auth.server";
import { readForm } from "~/utils/form.server";
import { safeRedirectPath } from "~/utils/redirect";
import { createUserSession, getSessionUser } from "~/utils/session.server";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await getSessionUser(request);
  if (user) throw redirect(homeFor(user.role));
  return null;
}

export async function action({ request }: Route.ActionArgs) {
  const submission = parseWithZod(await readForm(request.clone()), { schema: signInSchema });
  if (submission.status !== "success") {
    return data(submission.reply({ hideFields: ["password"] }), { status: 400 });
  }
  try {
    const user = await authenticator.authenticate("form", request);
    return await createUserSession(request, user.id, safeRedirectPath(submission.value.redirectTo, homeFor(user.role)));
  } catch (error) {
    if (error instanceof SignInError) {
      return data(submission.reply({ formErrors: [error.message], hideFields: ["password"] }), {
        status: error.status,
        headers: error.retryAfterSeconds ? { "retry-after": String(error.retryAfterSeconds) } : undefined,
      });
    }
    throw error;
  }
}

export default function Login({ actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  const redirectTo =
    typeof window === "undefined"
      ? undefined
      : (new URLSearchParams(window.location.search).get("redirectTo") ?? undefined);
  // Checked by the server only (the page ships no validation code): the errors come back with the reply.
  const formErrors = replyErrors(actionData, "");
  return (
    <main id="main" className="flex min-h-screen items-center justify-center px-4 py-12">
      <div className="w-full max-w-md">
        <p className="mb-6 flex items-center justify-center gap-2 text-2xl font-bold text-accent-800">
          <img src="/favicon.svg" alt="" className="size-8" /> Dioptra
        </p>
        <div className="rounded-lg border border-line bg-white p-8 shadow-sm">
          <h1 className="text-2xl">Sign in</h1>
          <p className="mt-1 text-sm text-muted">For the practice team and patients with an account.</p>
          <Form method="post" id="sign-in" noValidate className="mt-6 space-y-4">
            {formErrors ? (
              <Notice tone="error" title="Could not sign you in" id="sign-in-form-error">
                {formErrors.join(" ")}
              </Notice>
            ) : null}
            <input type="hidden" name="redirectTo" value={redirectTo ?? ""} />
            <Field
              label="E-mail"
              errors={replyErrors(actionData, "email")}
              inputProps={{
                ...serverInput("sign-in", actionData, "email", "email"),
                autoComplete: "username",
                autoFocus: true,
              }}
            />
            <Field
              label="Password"
              errors={replyErrors(actionData, "password")}
              inputProps={{
                ...serverInput("sign-in", actionData, "password", "password"),
                autoComplete: "current-password",
              }}
            />
            <Button type="submit" className="w-full" pending={navigation.state === "submitting"}>
              Sign in
            </Button>
          </Form>
          <ul className="mt-6 space-y-2 text-sm">
            <li>
              <Link to="/forgot-password" className="font-semibold text-accent-700 underline underline-offset-4">
                Forgotten your password?
              </Link>
            </li>
            <li>
              <Link to="/sign-in-link" className="font-semibold text-accent-700 underline underline-offset-4">
                Patients: e-mail me a sign-in link
              </Link>
            </li>
          </ul>
        </div>
      </div>
    </main>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Sign in · Dioptra" }];
