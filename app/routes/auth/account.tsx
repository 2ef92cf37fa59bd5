import { Form } from "react-router";
import type { Route } from "./+types/account";
import { PageHeader } from "~/components/page-header";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { accountSessions } from "~/models/users/account.server";
import { requireUser } from "~/utils/auth.server";
import { ROLE_LABEL } from "~/utils/nav";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireUser(request);
  const rows = await accountSessions(user.id);
  return {
    user: { name: user.name, email: user.email, role: user.role },
    sessions: rows.map((s) => ({
      key: s.id.slice(0, 8),
      current: s.id === user.sessionId,
      since: s.since,
      userAgent: s.userAgent ?? "unknown browser",
    })),
  };
}

export default function Account({ loaderData }: Route.ComponentProps) {
  const { user, sessions } = loaderData;
  return (
    <>
      <PageHeader title="Your account" description={`${user.name} · ${user.email} · ${ROLE_LABEL[user.role]}`} />
      <Card
        title="Where you are signed in"
        actions={
          <Form method="post" action="/logout">
            <input type="hidden" name="scope" value="everywhere" />
            <Button type="submit" variant="danger">
              Sign out everywhere
            </Button>
          </Form>
        }
      >
        <ul className="divide-y divide-line">
          {sessions.map((s) => (
            <li key={s.key} className="flex flex-wrap justify-between gap-2 py-3 text-sm">
              <span className="max-w-xl truncate">{s.userAgent}</span>
              <span className="text-muted">
                since {s.since} {s.current ? <strong className="text-ink">· this browser</strong> : null}
              </span>
            </li>
          ))}
        </ul>
      </Card>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Account · Dioptra" }];
