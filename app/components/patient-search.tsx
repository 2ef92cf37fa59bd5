import { useEffect, useId, useRef, useState } from "react";
import { useFetcher, useNavigate } from "react-router";
import { formatDate } from "~/lib/format";
import { Icon } from "./ui/icon";

export type PatientSearchHit = {
  id: string;
  firstName: string;
  lastName: string;
  dateOfBirth: string;
  phone: string | null;
  email: string | null;
};
type Page = { q: string; offset: number; results: PatientSearchHit[]; total: number; totalIsExact: boolean };

/** "12 patients match", "more than 1,000 patients match". */
export function matchCount(total: number, exact: boolean) {
  const n = total.toLocaleString("en-GB");
  if (!exact) return `More than ${n} patients match`;
  return total === 1 ? "1 patient matches" : `${n} patients match`;
}

/**
 * Find a patient as you type: a debounced fetcher to /api/patients over the whole register,
 * results as an ARIA combobox (arrow keys move, Enter chooses, Escape closes). The list says how
 * many match, scrolls, and its last option loads the next results.
 *
 * Without `name` it opens the chosen patient's chart. With `name` it is a form field: the chosen
 * patient's id is posted under that name, and the choice is shown with a way to change it.
 */
export function PatientSearch({
  label = "Find a patient",
  name,
  initial = null,
  onChoose,
  describedBy,
  invalid,
}: {
  label?: string;
  name?: string;
  initial?: PatientSearchHit | null;
  onChoose?: (hit: PatientSearchHit | null) => void;
  describedBy?: string;
  invalid?: boolean;
}) {
  const fetcher = useFetcher<Page>();
  const navigate = useNavigate();
  const [value, setValue] = useState("");
  const [open, setOpen] = useState(false);
  const [active, setActive] = useState(-1);
  const [pages, setPages] = useState<Page | null>(null);
  const [chosen, setChosen] = useState<PatientSearchHit | null>(initial);
  const timer = useRef<ReturnType<typeof setTimeout> | null>(null);
  const inputRef = useRef<HTMLInputElement>(null);
  // useId gives ":r1:"-like ids; letters, digits and hyphens keep them valid in every context.
  const id = `patient-search-${useId().replace(/[^A-Za-z0-9]/g, "")}`;
  const inputId = `${id}-input`;
  const listId = `${id}-list`;
  const picker = name !== undefined;

  // Each answer starts a new list (offset 0) or extends the one shown (the next results).
  const [answerSeen, setAnswerSeen] = useState(fetcher.data);
  if (fetcher.data !== answerSeen) {
    setAnswerSeen(fetcher.data);
    const d = fetcher.data;
    if (d && Array.isArray(d.results))
      setPages((prev) =>
        d.offset > 0 && prev && prev.q === d.q
          ? { ...d, results: [...prev.results, ...d.results.filter((r) => !prev.results.some((p) => p.id === r.id))] }
          : d,
      );
  }

  useEffect(
    () => () => {
      if (timer.current) clearTimeout(timer.current);
    },
    [],
  );

  useEffect(() => {
    if (active < 0) return;
    document.getElementById(`${id}-opt-${active}`)?.scrollIntoView({ block: "nearest" });
  }, [active, id]);

  const current = value.trim() && pages && pages.q === value.trim().slice(0, 100) ? pages : null;
  const results = current?.results ?? [];
  const hasMore = !!current && results.length < current.total;
  const optionCount = results.length + (hasMore ? 1 : 0);

  function onChange(next: string) {
    setValue(next);
    setActive(-1);
    setOpen(true);
    if (timer.current) clearTimeout(timer.current);
    if (!next.trim()) return;
    timer.current = setTimeout(() => fetcher.load(`/api/patients?q=${encodeURIComponent(next.trim())}`), 180);
  }

  function loadMore() {
    if (!current || fetcher.state !== "idle") return;
    fetcher.load(`/api/patients?q=${encodeURIComponent(current.q)}&offset=${results.length}`);
  }

  function choose(hit: PatientSearchHit) {
    if (!picker) {
      navigate(`/patients/${hit.id}`);
      return;
    }
    setChosen(hit);
    setOpen(false);
    setActive(-1);
    setValue("");
    onChoose?.(hit);
  }

  function onKeyDown(e: React.KeyboardEvent<HTMLInputElement>) {
    if (e.key === "ArrowDown") {
      e.preventDefault();
      setOpen(true);
      setActive((i) => Math.min(i + 1, optionCount - 1));
    } else if (e.key === "ArrowUp") {
      e.preventDefault();
      setActive((i) => Math.max(i - 1, 0));
    } else if (e.key === "Enter") {
      if (hasMore && active === results.length) {
        e.preventDefault();
        loadMore();
        return;
      }
      const hit = results[active] ?? (results.length === 1 ? results[0] : undefined);
      if (hit) {
        e.preventDefault();
        choose(hit);
      } else if (picker) {
        // Enter in the search box never submits the surrounding form.
        e.preventDefault();
      }
    } else if (e.key === "Escape") {
      setOpen(false);
      setActive(-1);
    }
  }

  const searching = fetcher.state !== "idle";
  const showList = open && value.trim().length > 0 && results.length > 0;
  const countText = current ? matchCount(current.total, current.totalIsExact) : "";
  const status =
    !open || !value.trim()
      ? ""
      : searching
        ? "Searching…"
        : results.length
          ? `${countText}; ${results.length} shown.`
          : "No patient matches.";
  const hint = picker
    ? "Any part of the name, phone or e-mail, or a date of birth such as 17/04/1979. Arrow keys choose, Enter picks the patient."
    : "Any part of the name, phone or e-mail, or a date of birth such as 17/04/1979. Arrow keys choose, Enter opens the chart.";

  if (picker && chosen) {
    return (
      <div>
        <input type="hidden" name={name} value={chosen.id} />
        <p className="mb-1 text-sm font-semibold">{label}</p>
        <p
          className="flex flex-wrap items-center gap-3 rounded-md border border-line bg-canvas px-3 py-2"
          data-testid="chosen-patient"
        >
          <span>
            <span className="font-semibold">
              {chosen.lastName}, {chosen.firstName}
            </span>{" "}
            <span className="text-sm text-muted">born {formatDate(chosen.dateOfBirth)}</span>
          </span>
          <button
            type="button"
            className="min-h-6 text-sm font-semibold text-accent-700 underline underline-offset-4"
            onClick={() => {
              setChosen(null);
              onChoose?.(null);
              setTimeout(() => inputRef.current?.focus(), 0);
            }}
          >
            Change
            <span className="sr-only">
              {" "}
              the patient ({chosen.firstName} {chosen.lastName} now)
            </span>
          </button>
        </p>
      </div>
    );
  }

  // The ARIA 1.2 combobox pattern with a list popup: a text input with role=combobox controls
  // a listbox that is always in the page (hidden while closed), and points at the active option.
  return (
    <div className="relative">
      {picker ? <input type="hidden" name={name} value="" /> : null}
      <label htmlFor={inputId} className="mb-1 block text-sm font-semibold">
        {label}
      </label>
      <input
        ref={inputRef}
        id={inputId}
        type="text"
        role="combobox"
        aria-expanded={showList}
        aria-controls={listId}
        aria-autocomplete="list"
        aria-activedescendant={
          showList && active >= 0
            ? hasMore && active === results.length
              ? `${id}-more`
              : `${id}-opt-${active}`
            : undefined
        }
        aria-describedby={[`${id}-hint`, describedBy].filter(Boolean).join(" ")}
        aria-invalid={invalid ? true : undefined}
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
        {hint}
      </p>
      <div hidden={!showList} className="absolute z-20 mt-1 w-full rounded-md border border-line bg-white shadow-lg">
        <p className="border-b border-line px-3 py-1.5 text-sm text-muted" data-testid="patient-search-count">
          {countText}
          {current && results.length < current.total ? ` · ${results.length} shown` : ""}
        </p>
        <ul id={listId} role="listbox" aria-label="Matching patients" className="max-h-80 overflow-auto py-1">
          {results.map((hit, i) => (
            <li
              key={hit.id}
              id={`${id}-opt-${i}`}
              role="option"
              aria-selected={i === active}
              onMouseDown={(e) => {
                e.preventDefault();
                choose(hit);
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
          {hasMore ? (
            <li
              id={`${id}-more`}
              role="option"
              aria-selected={active === results.length}
              onMouseDown={(e) => {
                e.preventDefault();
                loadMore();
              }}
              onMouseEnter={() => setActive(results.length)}
              className={`cursor-pointer px-3 py-2 font-semibold text-accent-700 underline underline-offset-4 ${active === results.length ? "bg-accent-50" : ""}`}
            >
              {searching
                ? "Loading more…"
                : `Show more (${current!.total - results.length}${current!.totalIsExact ? "" : "+"} not shown yet)`}
            </li>
          ) : null}
        </ul>
      </div>
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
