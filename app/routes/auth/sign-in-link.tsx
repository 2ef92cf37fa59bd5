import type { Route } from "./+types/sign-in-link";
import { EmailLinkForm } from "~/components/email-link-form";
import { accountMailFormAction } from "~/models/users/account-mail-form.server";

/**
 * Patients may ask for a one-time sign-in link instead of typing a password. Staff accounts
 * always sign in with their password; the answer is the same either way.
 */
export async function action({ request }: Route.ActionArgs) {
  return accountMailFormAction("sign_in", request);
}

export default function SignInLink({ actionData }: Route.ComponentProps) {
  return (
    <EmailLinkForm
      id="sign-in-link"
      title="E-mail me a sign-in link"
      intro="For patients with an online account. The link works once, for 15 minutes."
      sentText="If a patient account exists for that address, a sign-in link is on its way."
      submitLabel="Send sign-in link"
      back="Sign in with a password instead"
      actionData={actionData}
    />
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Sign-in link · Dioptra" }];
