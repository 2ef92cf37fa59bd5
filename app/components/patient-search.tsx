import { useEffect, useId, useRef, useState } from "react";
import { useFetcher, useNavigate } from "react-router";
import { formatDate } from "~/lib/format";
import { Icon } from "./ui/icon";

type Hit = {
  id: string;
  firstName: string;
  lastName: string;
  dateOfBirth: string;
  phone: string | null;
  email: string | null;
};

/**
 * Find a patient as you type: a debounced fetcher to /api/patients, results as an ARIA combobox
 * (arrow keys move, Enter opens the chart, Escape closes).
 */
export function PatientSearch() {
  const fetcher = useFetcher<{ q: string; results: Hit[] }>();
  const navigate = useNavigate();
  const [value, setValue] = useState("");
  const [open, setOpen] = useState(false);
  const [active, setActive] = useState(-1);
  const timer = useRef<ReturnType<typeof setTimeout> | null>(null);
  // useId gives ":r1:"-like ids; letters, digits and hyphens keep them valid in every context.
  const id = `patient-search-${useId().replace(/[^A-Za-z0-9]/g, "")}`;
  const inputId = `${id}-input`;
  const listId = `${id}-list`;
  const results = value.trim() ? (fetcher.data?.results ?? []) : [];

  useEffect(
    () => () => {
      if (timer.current) clearTimeout(timer.current);
    },
    [],
  );

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
  const showList = open && value.trim().length > 0 && results.length > 0;
  const status =
    !open || !value.trim()
      ? ""
      : searching
        ? "Searching…"
        : results.length
          ? `${results.length} ${results.length === 1 ? "patient" : "patients"} found`
          : "No patient matches.";
  // The ARIA 1.2 combobox pattern with a list popup: a text input with role=combobox controls
  // a listbox that is always in the page (hidden while closed), and points at the active option.
  return (
    <div className="relative">
      <label htmlFor={inputId} className="mb-1 block text-sm font-semibold">
        Find a patient
      </label>
      <input
        id={inputId}
        type="text"
        role="combobox"
        aria-expanded={showList}
        aria-controls={listId}
        aria-autocomplete="list"
        aria-activedescendant={showList && active >= 0 ? `${id}-opt-${active}` : undefined}
        aria-describedby={`${id}-hint`}
        autoComplete="off"
        spellCheck={false}
        value={value}
        onChange={(e) => onChange(e.target.value)}
        onKeyDown={onKeyDown}
        onBlur={() => setTimeout(() => setOpen(false), 150)}
        onFocus={() => setOpen(true)}
        placeholder="Name, date of birth, phone or e-mail"
        className="block w-full rounded-md border border-line bg-white px-3 py-2 text-base text-ink placeholder:text-muted/70 focus:border-accent-600"
      />
      <p id={`${id}-hint`} className="mt-1 text-sm text-muted">
        Any part of the name, phone or e-mail, or a date of birth such as 17/04/1979. Arrow keys choose, Enter opens the
        chart.
      </p>
      <ul
        id={listId}
        role="listbox"
        aria-label="Matching patients"
        hidden={!showList}
        className="absolute z-20 mt-1 max-h-96 w-full overflow-auto rounded-md border border-line bg-white py-1 shadow-lg"
      >
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
      </ul>
      {open && value.trim() && !results.length ? (
        <p className="absolute z-20 mt-1 flex w-full items-center gap-2 rounded-md border border-line bg-white px-3 py-2 text-sm text-muted shadow-lg">
          <Icon name="info" /> {searching ? "Searching…" : "No patient matches."}
        </p>
      ) : null}
      <p className="sr-only" role="status" aria-live="polite">
        {status}
      </p>
    </div>
  );
}
