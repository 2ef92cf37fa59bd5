/** The recall list's table: who is due, when and why, and the box to choose each one for an e-mail. */
import { createColumnHelper } from "@tanstack/react-table";
import type { Dispatch, SetStateAction } from "react";
import type { Route } from "./+types/recalls";
import { formatDob } from "./booking-form";
import { DataTable } from "~/components/data-table";
import { StatusBadge } from "~/components/ui/notice";

type Row = Route.ComponentProps["loaderData"]["rows"][number];
type Props = {
  rows: Row[];
  selected: Set<string>;
  setSelected: Dispatch<SetStateAction<Set<string>>>;
  multiSite: boolean;
  today: string;
};

const col = createColumnHelper<Row>();
const canEmail = (r: Row) => Boolean(r.email && r.recallsByEmail);

function RecallState({ r }: { r: Row }) {
  if (!canEmail(r))
    return <StatusBadge tone="warning">{r.email ? "Opted out of recall e-mails" : "No e-mail address"}</StatusBadge>;
  if (r.lastRecall) {
    const { status } = r.lastRecall;
    return (
      <>
        <StatusBadge tone={status === "sent" ? "success" : status === "failed" ? "error" : "info"}>
          {status === "sent"
            ? "Recall sent"
            : status === "failed"
              ? "Recall failed"
              : status === "skipped"
                ? "Recall not sent"
                : "Recall waiting"}
        </StatusBadge>
        <span className="block text-muted">
          {status === "skipped" && r.lastRecall.skippedReason ? `${r.lastRecall.skippedReason} · ` : ""}
          {r.lastRecall.on}
        </span>
      </>
    );
  }
  if (r.nextBooked) return <span className="text-muted">Booked {r.nextBooked}</span>;
  return <span className="text-muted">Not yet recalled</span>;
}

export function RecallTable({ rows, selected, setSelected, multiSite, today }: Props) {
  const emailable = rows.filter(canEmail);
  const allChecked = emailable.length > 0 && emailable.every((r) => selected.has(r.patientId));
  const columns = [
    col.display({
      id: "choose",
      header: () => (
        <label className="flex items-center gap-2 font-semibold">
          <input
            type="checkbox"
            className="size-4 accent-accent-700"
            checked={allChecked}
            onChange={(e) => setSelected(e.target.checked ? new Set(emailable.map((r) => r.patientId)) : new Set())}
          />
          <span className="sr-only">Choose all who can be e-mailed</span>
        </label>
      ),
      cell: ({ row: { original: r } }) => (
        <input
          type="checkbox"
          name="patientId"
          value={r.patientId}
          disabled={!canEmail(r)}
          checked={selected.has(r.patientId)}
          onChange={(e) =>
            setSelected((s) => {
              const next = new Set(s);
              if (e.target.checked) next.add(r.patientId);
              else next.delete(r.patientId);
              return next;
            })
          }
          aria-label={`Choose ${r.name}`}
          className="size-4 accent-accent-700"
        />
      ),
    }),
    col.accessor("name", {
      header: "Patient",
      cell: ({ row: { original: r } }) => (
        <>
          <span className="font-semibold">{r.name}</span>
          <span className="block text-muted">
            born {formatDob(r.dateOfBirth)} · age {r.age}
          </span>
        </>
      ),
    }),
    col.accessor("lastVisit", {
      header: "Last routine exam",
      cell: ({ row: { original: r } }) => (
        <>
          {formatDob(r.lastVisit)}
          <span className="block text-muted">{r.lastVisitType}</span>
          {multiSite ? <span className="block text-muted">Recall to {r.siteName}</span> : null}
        </>
      ),
    }),
    col.accessor("dueDate", {
      header: "Due",
      cell: ({ row: { original: r } }) => (
        <>
          <span className="font-semibold">{formatDob(r.dueDate)}</span>
          {r.dueDate < today ? (
            <span className="ml-2">
              <StatusBadge tone="warning">Overdue</StatusBadge>
            </span>
          ) : null}
          <span className="block text-muted">
            {r.months} months ({r.rule})
          </span>
        </>
      ),
    }),
    col.display({ id: "recall", header: "Recall", cell: ({ row: { original: r } }) => <RecallState r={r} /> }),
  ];
  return (
    <DataTable
      data={rows}
      columns={columns}
      getRowId={(r) => r.patientId}
      caption="Patients due for a recall, soonest first"
      empty="Nobody is due in this range."
    />
  );
}
