import { useFetcher } from "react-router";
import { Button } from "./ui/button";

type Reply = { ok?: boolean; message?: string; error?: string };

/** Sends the patient an invitation to their online page (POST /api/portal-invite) and says what happened. */
export function PortalInviteButton({ patientId }: { patientId: string }) {
  const fetcher = useFetcher<Reply>();
  const reply = fetcher.data;
  return (
    <fetcher.Form method="post" action="/api/portal-invite" className="flex flex-col items-end gap-1">
      <input type="hidden" name="patientId" value={patientId} />
      <Button type="submit" variant="secondary" pending={fetcher.state !== "idle"}>
        Invite to the patient portal
      </Button>
      {reply ? (
        <p
          role={reply.error ? "alert" : "status"}
          className={`max-w-xs text-right text-sm font-semibold ${reply.error ? "text-red-800" : "text-emerald-800"}`}
        >
          <span aria-hidden="true">{reply.error ? "✕ " : "✓ "}</span>
          {reply.error ?? reply.message}
        </p>
      ) : null}
    </fetcher.Form>
  );
}
