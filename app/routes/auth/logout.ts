import { redirect } from "react-router";
import type { Route } from "./+types/logout";
import { audit } from "~/utils/audit.server";
import { destroySessionCookie, endSessions, getSessionUser } from "~/utils/session.server";

export async function loader() {
  // Signing out changes state, so it is a POST; a GET just goes home.
  return redirect("/");
}

/** Ends this session, or with `scope=everywhere` every session of the user. */
export async function action({ request }: Route.ActionArgs) {
  const user = await getSessionUser(request);
  const form = await request.formData();
  if (user) {
    const everywhere = form.get("scope") === "everywhere";
    await endSessions(everywhere ? { userId: user.id } : { sessionId: user.sessionId });
    await audit({ action: everywhere ? "auth.sign_out_everywhere" : "auth.sign_out", actorUserId: user.id, request });
  }
  return redirect("/login", { headers: { "Set-Cookie": await destroySessionCookie() } });
}
