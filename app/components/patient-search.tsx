import { useEffect, useId, useRef, useState } from "react";
import { useFetcher, useNavigate } from "react-router";
import { formatDate } from "~/routes/patients/patient-schema";
import { Icon } from "./ui/icon";

type Hit = { id: string; firstName: string; lastName: string; dateOfBirth: string; phone: string | null; email: string | null };

/**
 * Find a patient as you type: a debounced fetcher to /api/patients, results as an ARIA combobox
 * (arrow keys move, Enter opens the chart, Escape closes).
 */
export function PatientSearch({ autoFocus = false }: { autoFocus?: boolean }) {
  const fetcher = useFetcher<{ q: string; results: Hit[] }>();
  const navigate = useNavigate();
  const [value, setValue] = useState("");
  const [open, setOpen] = useState(false);
  const [active, setActive] = useState(-1);
  const timer = useRef<ReturnType<typeof setTimeout> | null>(null);
  const id = useId();
  const listId = `${id}-list`;
  const results = value.trim() ? (fetcher.data?.results ?? []) : [];

  useEffect(() => () => { if (timer.current) clearTimeout(timer.current); }, []);

  function onChange(next: string) {
    setValue(next);
    setActive(-1);
    setOpen(true);
    if (timer.current) clearTimeout(timer.current);
    if (!next.trim()) return;
    timer.current = setTimeout(() => fetcher.load(`/api/patients?q=${encodeURIComponent(next.trim())}`), 180);
  }

  function onKeyDown(e: React.KeyboardEvent<HTMLInputElement>) {
    if (e.key === "ArrowDown") {
      e.preventDefault();
      setOpen(true);
      setActive((i) => Math.min(i + 1, results.length - 1));
    } else if (e.key === "ArrowUp") {
      e.preventDefault();
      setActive((i) => Math.max(i - 1, 0));
    } else if (e.key === "Enter") {
      const hit = results[active] ?? (results.length === 1 ? results[0] : undefined);
      if (hit) {
        e.preventDefault();
        navigate(`/patients/${hit.id}`);
      }
    } else if (e.key === "Escape") {
      setOpen(false);
      setActive(-1);
    }
  }

  const searching = fetcher.state !== "idle";
  const showList = open && value.trim().length > 0;
  return (
    <div className="relative">
      <label htmlFor={`${id}-input`} className="mb-1 block text-sm font-semibold">
        Find a patient
      </label>
      <input
        id={`${id}-input`}
        type="search"
        role="combobox"
        aria-expanded={showList}
        aria-controls={listId}
        aria-autocomplete="list"
        aria-activedescendant={active >= 0 ? `${id}-opt-${active}` : undefined}
        aria-describedby={`${id}-hint`}
        autoComplete="off"
        autoFocus={autoFocus}
        value={value}
        onChange={(e) => onChange(e.target.value)}
        onKeyDown={onKeyDown}
        onBlur={() => setTimeout(() => setOpen(false), 150)}
        onFocus={() => setOpen(true)}
        placeholder="Name, date of birth, phone or e-mail"
        className="block w-full rounded-md border border-line bg-white px-3 py-2 text-base text-ink placeholder:text-muted/70 focus:border-accent-600"
      />
      <p id={`${id}-hint`} className="mt-1 text-sm text-muted">
        Any part of the name, phone or e-mail, or a date of birth such as 17/04/1979. Arrow keys choose, Enter opens the chart.
      </p>
      {showList ? (
        <ul id={listId} role="listbox" aria-label="Matching patients" className="absolute z-20 mt-1 max-h-96 w-full overflow-auto rounded-md border border-line bg-white py-1 shadow-lg">
          {results.map((hit, i) => (
            <li
              key={hit.id}
              id={`${id}-opt-${i}`}
              role="option"
              aria-selected={i === active}
              onMouseDown={(e) => {
                e.preventDefault();
                navigate(`/patients/${hit.id}`);
              }}
              onMouseEnter={() => setActive(i)}
              className={`cursor-pointer px-3 py-2 ${i === active ? "bg-accent-50" : ""}`}
            >
              <span className="font-semibold">
                {hit.lastName}, {hit.firstName}
              </span>{" "}
              <span className="text-sm text-muted">
                born {formatDate(hit.dateOfBirth)}
                {hit.phone ? ` · ${hit.phone}` : ""}
                {hit.email ? ` · ${hit.email}` : ""}
              </span>
            </li>
          ))}
          {!results.length ? (
            <li role="option" aria-selected={false} aria-disabled="true" className="flex items-center gap-2 px-3 py-2 text-sm text-muted">
              <Icon name="info" /> {searching ? "Searching…" : "No patient matches."}
            </li>
          ) : null}
        </ul>
      ) : null}
      <p className="sr-only" aria-live="polite">
        {showList && !searching ? `${results.length} ${results.length === 1 ? "patient" : "patients"} found` : ""}
      </p>
    </div>
  );
}
