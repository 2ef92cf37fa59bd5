import type { Route } from "./+types/mailbox-attachment";
import { mailboxFetch, requireDemoMode } from "~/utils/mailbox.server";

export async function loader({ params }: Route.LoaderArgs) {
  requireDemoMode();
  const res = await mailboxFetch(
    `/messages/${encodeURIComponent(params.messageId)}/attachments/${encodeURIComponent(params.index)}`,
  );
  if (!res.ok) return new Response("No such attachment.", { status: 404 });
  return new Response(res.body, {
    headers: {
      "content-type": res.headers.get("content-type") ?? "application/octet-stream",
      "content-disposition": res.headers.get("content-disposition") ?? "attachment",
    },
  });
}
