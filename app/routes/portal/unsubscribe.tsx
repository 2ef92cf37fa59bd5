import { data, Form, useNavigation } from "react-router";
import type { Route } from "./+types/unsubscribe";
import { AuthCard } from "~/components/auth-card";
import { Button } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { unsubscribeByLink, unsubscribeState } from "~/models/portal/email-choices.server";
import { verifyUnsubscribe, type UnsubscribeList } from "~/utils/mail.server";
import { notFound } from "~/utils/failure.server";

const WHAT: Record<UnsubscribeList, { title: string; words: string; rest: string }> = {
  reminders: {
    title: "appointment e-mails",
    words: "appointment reminders and other e-mails about your appointments",
    rest: "recall e-mails when your next eye examination is due",
  },
  recalls: {
    title: "recall e-mails",
    words: "e-mails telling you when your next eye examination is due",
    rest: "e-mails about appointments you book",
  },
};

/**
 * /unsubscribe/:token — the link in a reminder's or recall's List-Unsubscribe header and footer.
 * No sign-in: the signed token names the patient and the kind of e-mail. Opening the link only
 * shows a button (mail scanners fetch links); the POST records the opt-out. A mail program's
 * one-click POST (RFC 8058, body "List-Unsubscribe=One-Click") lands on the same action.
 */
export async function loader({ params }: Route.LoaderArgs) {
  const t = verifyUnsubscribe(params.token);
  if (!t) notFound("This unsubscribe link is not valid.");
  const p = await unsubscribeState(t.patientId);
  return { list: t.list, alreadyOff: p ? !p[t.list] : true };
}

export async function action({ request, params }: Route.ActionArgs) {
  const t = verifyUnsubscribe(params.token);
  if (!t)
    return data(
      {
        ok: false as const,
        error: "This unsubscribe link is not valid. Call the practice and we will stop the e-mails.",
      },
      { status: 404 },
    );
  await unsubscribeByLink(t.patientId, t.list, request);
  return { ok: true as const, list: t.list };
}

export default function Unsubscribe({ loaderData, actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  const what = WHAT[loaderData.list];
  const done = actionData?.ok || loaderData.alreadyOff;
  return (
    <AuthCard title={done ? "You will get no more of these e-mails" : `Stop ${what.title}?`}>
      {actionData && !actionData.ok ? (
        <div className="mt-4">
          <Notice tone="error" title="Not changed">
            {actionData.error}
          </Notice>
        </div>
      ) : done ? (
        <div className="mt-4 space-y-3">
          <Notice tone="success" title="Unsubscribed">
            We have stopped {what.words}.
          </Notice>
          <p className="text-sm text-muted">
            You will still get {what.rest}, unless you stop those too. To start again, tell the practice.
          </p>
        </div>
      ) : (
        <Form method="post" className="mt-6 space-y-4">
          <p>We will stop sending you {what.words}.</p>
          <input type="hidden" name="List-Unsubscribe" value="One-Click" />
          <Button type="submit" className="w-full" pending={navigation.state === "submitting"}>
            Stop these e-mails
          </Button>
        </Form>
      )}
    </AuthCard>
  );
}

export const meta: Route.MetaFunction = () => [
  { title: "E-mail preferences · Dioptra" },
  { name: "robots", content: "noindex" },
];
