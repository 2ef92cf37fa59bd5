import { redirect } from "react-router";
import type { Route } from "./+types/logout";
import { audit } from "~/utils/audit.server";
import { readForm } from "~/utils/form.server";
import { destroySessionCookie, endSessions, getSessionUser } from "~/utils/session.server";

export async function loader() {
  // Signing out changes state, so it is a POST; a GET just goes home.
  return redirect("/");
}

/**
 * Ends this session, or with `scope=everywhere` every session of the user. A POST without a
 * form (or with one that cannot be read) still ends this session: whoever sent it meant to leave.
 */
export async function action({ request }: Route.ActionArgs) {
  const user = await getSessionUser(request);
  const form = await readForm(request).catch(() => new FormData());
  if (user) {
    const everywhere = form.get("scope") === "everywhere";
    await endSessions(everywhere ? { userId: user.id } : { sessionId: user.sessionId });
    await audit({ action: everywhere ? "auth.sign_out_everywhere" : "auth.sign_out", actorUserId: user.id, request });
  }
  return redirect("/login", { headers: { "Set-Cookie": await destroySessionCookie() } });
}
