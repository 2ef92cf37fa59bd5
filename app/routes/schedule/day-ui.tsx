import { useEffect } from "react";
import { useFetcher, useRevalidator } from "react-router";
import { Button } from "~/components/ui/button";
import { NEXT_STATUSES, STATUS_COMMAND, type Status } from "~/lib/scheduling/status";

/** Commands of a row; "start exam" only for clinicians (the server checks it too). */
export function StatusCommands({ id, status, role, name }: { id: string; status: Status; role: string; name: string }) {
  const fetcher = useFetcher<{ ok: boolean; error: string | null }>();
  const next = NEXT_STATUSES[status].filter((s) => s !== "in_exam" || role !== "receptionist");
  const busy = fetcher.state !== "idle";
  return (
    <div>
      <fetcher.Form method="post" className="flex flex-wrap gap-2">
        <input type="hidden" name="intent" value="status" />
        <input type="hidden" name="appointmentId" value={id} />
        {next.map((s) => (
          <Button
            key={s}
            type="submit"
            name="status"
            value={s}
            variant={
              s === "cancelled" || s === "no_show"
                ? "danger"
                : s === "arrived" || s === "in_exam"
                  ? "primary"
                  : "secondary"
            }
            className="px-3 py-1"
            disabled={busy}
          >
            {STATUS_COMMAND[s]}
            <span className="sr-only"> for {name}</span>
          </Button>
        ))}
      </fetcher.Form>
      {fetcher.data?.error ? (
        <p role="alert" className="mt-1 text-sm font-semibold text-red-800">
          ✕ {fetcher.data.error}
        </p>
      ) : null}
    </div>
  );
}

/** Re-reads the page's data every `seconds` while the tab is visible: the list moves without a reload. */
export function usePolling(seconds: number) {
  const revalidator = useRevalidator();
  useEffect(() => {
    const t = setInterval(() => {
      if (document.visibilityState === "visible" && revalidator.state === "idle") revalidator.revalidate();
    }, seconds * 1000);
    return () => clearInterval(t);
  }, [revalidator, seconds]);
}
