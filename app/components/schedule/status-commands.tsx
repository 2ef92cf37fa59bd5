import { useEffect, useRef, useState } from "react";
import { useFetcher } from "react-router";
import { Button } from "~/components/ui/button";
import {
  DAY_OF_VISIT_STATUSES,
  NEXT_STATUSES,
  STATUS_COMMAND,
  STATUS_LABEL,
  UNDO_COMMAND,
  type Status,
} from "~/lib/scheduling/status";

type Props = {
  id: string;
  status: Status;
  role: string;
  /** The patient's name, read after each command's words by screen readers. */
  name: string;
  /** The appointment's local date and today's, to ask before an arrival (etc.) on another day. */
  date: string;
  today: string;
  /** The route whose action changes statuses (the day list's serves every page). */
  action?: string;
  /** Only these commands (the Today card offers just the arrival). */
  only?: readonly Status[];
};

const DAY_WORDS = new Intl.DateTimeFormat("en-GB", { weekday: "long", day: "numeric", month: "long", timeZone: "UTC" });

/**
 * Commands of an appointment's status. The next steps come first; the undo of the last step is
 * worded as an undo and sits on a line of its own at the far end, away from the button just
 * pressed. A day-of-visit step on another day than today asks first (the server insists too).
 */
export function StatusCommands({ id, status, role, name, date, today, action = "/schedule/day", only }: Props) {
  const fetcher = useFetcher<{ ok: boolean; error: string | null; needsConfirm?: boolean }>();
  const [asking, setAsking] = useState<Status | null>(null);
  const dialog = useRef<HTMLDialogElement>(null);
  const undo = UNDO_COMMAND[status];
  const allowed = NEXT_STATUSES[status].filter(
    (s) => (s !== "in_exam" || role !== "receptionist") && (!only || only.includes(s)),
  );
  const forward = allowed.filter((s) => s !== undo?.to);
  const canUndo = undo && allowed.includes(undo.to);
  const busy = fetcher.state !== "idle";
  const otherDay = date !== today;
  // The dialog is drawn only while it asks (a day list has a row per visit); closing it the
  // dialog's own way hands focus back to the button that opened it.
  useEffect(() => {
    if (asking) dialog.current?.showModal();
  }, [asking]);

  // A day-of-visit step on another day is held back for a yes (without script the server refuses it with the reason).
  const hold = (to: Status) => (event: React.MouseEvent) => {
    if (otherDay && DAY_OF_VISIT_STATUSES.includes(to)) {
      event.preventDefault();
      setAsking(to);
    }
  };
  const when = DAY_WORDS.format(new Date(`${date}T12:00:00Z`));

  return (
    <fetcher.Form method="post" action={action}>
      <input type="hidden" name="intent" value="status" />
      <input type="hidden" name="appointmentId" value={id} />
      <div className="flex flex-wrap gap-2">
        {forward.map((s) => (
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
            onClick={hold(s)}
          >
            {STATUS_COMMAND[s]}
            <span className="sr-only"> for {name}</span>
          </Button>
        ))}
      </div>
      {canUndo ? (
        <div className="mt-3 flex justify-end border-t border-dashed border-line pt-2">
          <Button
            type="submit"
            name="status"
            value={undo.to}
            variant="ghost"
            className="px-3 py-1 underline underline-offset-4"
            disabled={busy}
            onClick={hold(undo.to)}
          >
            <span aria-hidden="true">↶</span> {undo.label}
            <span className="sr-only"> for {name}</span>
          </Button>
        </div>
      ) : null}
      {fetcher.data?.error ? (
        <p role="alert" className="mt-1 text-sm font-semibold text-red-800">
          ✕ {fetcher.data.error}
        </p>
      ) : null}
      {asking ? (
        <dialog
          ref={dialog}
          aria-labelledby={`confirm-${id}`}
          className="m-auto w-[min(30rem,calc(100vw-2rem))] rounded-lg border border-line p-6 shadow-xl backdrop:bg-ink/40"
          onClose={() => setAsking(null)}
        >
          <h2 id={`confirm-${id}`} className="mb-2 text-lg font-semibold">
            Not today&apos;s appointment
          </h2>
          <p className="mb-4 text-sm">
            {name}&apos;s appointment is on {when}, not today. Mark it {STATUS_LABEL[asking].toLowerCase()} anyway?
          </p>
          <div className="flex flex-wrap justify-end gap-2">
            <Button type="button" variant="secondary" onClick={() => dialog.current?.close()}>
              Keep it as it is
            </Button>
            <Button
              type="button"
              onClick={() => {
                void fetcher.submit(
                  { intent: "status", appointmentId: id, status: asking, confirmOtherDay: "1" },
                  { method: "post", action },
                );
                dialog.current?.close();
              }}
            >
              Yes, mark {STATUS_LABEL[asking].toLowerCase()} on {when}
            </Button>
          </div>
        </dialog>
      ) : null}
    </fetcher.Form>
  );
}
