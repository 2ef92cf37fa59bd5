import { data, Form, Link, useNavigation } from "react-router";
import type { Route } from "./+types/sign-in-link-verify";
import { AuthCard } from "~/components/auth-card";
import { Button } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { redeemSignInLink } from "~/models/users/account.server";
import { createUserSession } from "~/utils/session.server";
import { peekUserToken } from "~/utils/tokens.server";

// Opening the link only shows a button: mail scanners that fetch links must not use it up.
export async function loader({ request }: Route.LoaderArgs) {
  const token = new URL(request.url).searchParams.get("token") ?? "";
  const live = await peekUserToken(token, ["sign_in"]);
  return { token, valid: Boolean(live), email: live?.email ?? null };
}

export async function action({ request }: Route.ActionArgs) {
  const form = await request.formData();
  const raw = String(form.get("token") ?? "");
  const used = await redeemSignInLink(raw, request);
  if (!used)
    return data(
      { error: "This sign-in link has expired or has already been used. Ask for a new one." },
      { status: 400 },
    );
  return createUserSession(request, used.userId, "/portal");
}

export default function VerifySignInLink({ loaderData, actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  const valid = loaderData.valid && !actionData?.error;
  return (
    <AuthCard title={valid ? "Sign in" : "This link no longer works"}>
      {valid ? (
        <Form method="post" className="mt-6 space-y-4">
          <p className="text-sm text-muted">Signing in as {loaderData.email}</p>
          <input type="hidden" name="token" value={loaderData.token} />
          <Button type="submit" className="w-full" pending={navigation.state === "submitting"}>
            Continue to my page
          </Button>
        </Form>
      ) : (
        <div className="mt-4 space-y-4">
          <Notice tone="error" title="Expired or already used">
            {actionData?.error ?? "Sign-in links work once and for 15 minutes."}
          </Notice>
          <Link to="/sign-in-link" className="font-semibold text-accent-700 underline underline-offset-4">
            Send me a new link
          </Link>
        </div>
      )}
    </AuthCard>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Sign in · Dioptra" }];
