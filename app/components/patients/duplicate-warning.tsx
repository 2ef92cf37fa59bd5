import { Link } from "react-router";
import type { PatientSearchHit } from "~/components/patient-search";
import { Notice } from "~/components/ui/notice";
import { formatDate } from "~/lib/format";

/** A registered patient with the same name and date of birth. */
export type Duplicate = PatientSearchHit;

/**
 * The warning of every registration path when the same name and date of birth is already
 * registered: the likely matches (with `onChoose`, a button to take one instead) and the
 * confirmation the caller supplies.
 */
export function DuplicateWarning({
  duplicates,
  confirm,
  onChoose,
}: {
  duplicates: Duplicate[];
  confirm: React.ReactNode;
  onChoose?: (d: Duplicate) => void;
}) {
  return (
    <Notice tone="warning" title="This may be a patient who is already registered">
      <p>
        {duplicates.length === 1 ? "A patient" : `${duplicates.length} patients`} with the same name and date of birth{" "}
        {duplicates.length === 1 ? "is" : "are"} already registered:
      </p>
      <ul className="mt-2 list-disc pl-5">
        {duplicates.map((d) => (
          <li key={d.id}>
            <Link to={`/patients/${d.id}`} className="font-semibold underline">
              {d.lastName}, {d.firstName}
            </Link>{" "}
            born {formatDate(d.dateOfBirth)}
            {d.phone ? ` · ${d.phone}` : ""}
            {d.email ? ` · ${d.email}` : ""}
            {onChoose ? (
              <button
                type="button"
                className="ml-3 min-h-6 font-semibold text-accent-700 underline underline-offset-4"
                onClick={() => onChoose(d)}
              >
                Choose {d.firstName} {d.lastName}
              </button>
            ) : null}
          </li>
        ))}
      </ul>
      {confirm}
    </Notice>
  );
}
