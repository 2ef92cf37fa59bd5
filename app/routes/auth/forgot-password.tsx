import type { Route } from "./+types/forgot-password";
import { EmailLinkForm } from "~/components/email-link-form";
import { accountMailFormAction } from "~/models/users/account-mail-form.server";

export async function action({ request }: Route.ActionArgs) {
  return accountMailFormAction("reset", request);
}

export default function ForgotPassword({ actionData }: Route.ComponentProps) {
  return (
    <EmailLinkForm
      id="forgot-password"
      title="Reset your password"
      intro="We will e-mail you a link to choose a new one. It works once, for one hour."
      sentText="If an account exists for that address, a reset link is on its way."
      submitLabel="Send reset link"
      back="Back to sign in"
      actionData={actionData}
    />
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Reset password · Dioptra" }];
