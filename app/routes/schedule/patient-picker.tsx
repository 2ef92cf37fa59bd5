import { useEffect, useId, useState } from "react";
import { useFetcher } from "react-router";
import { ErrorList } from "~/components/forms";
import { Button } from "~/components/ui/button";
import { Input } from "~/components/ui/input";

import { matchCount } from "~/components/patient-search";
import { DuplicateWarning, type Duplicate } from "~/routes/patients/patient-form";
import { formatDob, type PatientOption } from "./booking-form";

export function PatientPicker({ initial, errors }: { initial: PatientOption | null; errors?: string[] }) {
  // The same search as the patients list (GET /api/patients?q=): a page at a time, with the count.
  type Found = {
    q: string;
    offset: number;
    total: number;
    totalIsExact: boolean;
    results: { id: string; firstName: string; lastName: string; dateOfBirth: string; email: string | null }[];
  };
  const search = useFetcher<Found>();
  type Registered = {
    patient?: PatientOption;
    error?: string;
    detail?: string;
    fieldErrors?: Record<string, string[]>;
    duplicates?: Duplicate[];
  };
  // Registration posts JSON to the API with fetch: a refusal (400, 409 with the likely matches)
  // comes back as problem details, read here as the JSON it is.
  const [registerState, setRegisterState] = useState<"idle" | "submitting">("idle");
  const [registered, setRegistered] = useState<Registered | undefined>(undefined);
  const register = {
    state: registerState,
    data: registered,
    async submit(body: Record<string, string>) {
      setRegisterState("submitting");
      try {
        const res = await fetch("/api/schedule-patients", {
          method: "POST",
          headers: { "content-type": "application/json", accept: "application/json" },
          body: JSON.stringify(body),
        });
        const reply = (await res.json().catch(() => null)) as Registered | null;
        setRegistered(
          reply && typeof reply === "object"
            ? { ...reply, error: reply.error ?? reply.detail }
            : { error: "The patient could not be registered. Try again." },
        );
      } catch {
        setRegistered({ error: "The patient could not be registered: check the connection and try again." });
      } finally {
        setRegisterState("idle");
      }
    },
  };
  const [q, setQ] = useState("");
  const [chosen, setChosen] = useState<PatientOption | null>(initial);
  const [extra, setExtra] = useState<PatientOption[]>(initial ? [initial] : []);
  const [newPatient, setNewPatient] = useState({ firstName: "", lastName: "", dateOfBirth: "", email: "", phone: "" });
  const [confirmDuplicate, setConfirmDuplicate] = useState(false);
  const [found, setFound] = useState<Found | null>(null);
  const [dismissed, setDismissed] = useState<unknown>(null);
  const id = useId();

  useEffect(() => {
    if (q.trim().length < 2) return;
    const t = setTimeout(() => search.load(`/api/patients?q=${encodeURIComponent(q.trim())}`), 200);
    return () => clearTimeout(t);
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, [q]);

  // Each answer starts a new list (offset 0) or extends the one shown (the next results).
  const [searchSeen, setSearchSeen] = useState(search.data);
  if (search.data !== searchSeen) {
    setSearchSeen(search.data);
    const d = search.data;
    if (d && Array.isArray(d.results))
      setFound((prev) =>
        d.offset > 0 && prev && prev.q === d.q
          ? { ...d, results: [...prev.results, ...d.results.filter((r) => !prev.results.some((p) => p.id === r.id))] }
          : d,
      );
  }

  // A patient just registered here is chosen and the quick form emptied.
  const [registeredSeen, setRegisteredSeen] = useState(register.data);
  if (register.data !== registeredSeen) {
    setRegisteredSeen(register.data);
    const p = register.data?.patient;
    if (p) {
      setExtra((list) => [p, ...list.filter((x) => x.id !== p.id)]);
      setChosen(p);
      setNewPatient({ firstName: "", lastName: "", dateOfBirth: "", email: "", phone: "" });
      setConfirmDuplicate(false);
    }
  }

  function takeExisting(d: Duplicate) {
    const p = { id: d.id, name: `${d.firstName} ${d.lastName}`, dateOfBirth: d.dateOfBirth, email: d.email };
    setExtra((list) => [p, ...list.filter((x) => x.id !== p.id)]);
    setChosen(p);
    setNewPatient({ firstName: "", lastName: "", dateOfBirth: "", email: "", phone: "" });
    setConfirmDuplicate(false);
    setDismissed(register.data);
  }

  const current = q.trim().length >= 2 && found && found.q === q.trim().slice(0, 100) ? found : null;
  const foundOptions: PatientOption[] = (current?.results ?? []).map((r) => ({
    id: r.id,
    name: `${r.firstName} ${r.lastName}`,
    dateOfBirth: r.dateOfBirth,
    email: r.email,
  }));
  const options = [...extra, ...foundOptions.filter((f) => !extra.some((e) => e.id === f.id))];
  const regErrors = register.data?.fieldErrors ?? {};
  const duplicates = register.data && register.data !== dismissed ? (register.data.duplicates ?? []) : [];
  return (
    <fieldset className="space-y-3" aria-describedby={errors?.length ? `${id}-err` : undefined}>
      <legend className="mb-1 text-sm font-semibold">Patient</legend>
      <div>
        <label htmlFor={`${id}-q`} className="mb-1 block text-sm text-muted">
          Find by name, date of birth, phone or e-mail
        </label>
        <Input
          id={`${id}-q`}
          type="search"
          value={q}
          onChange={(e) => setQ(e.target.value)}
          autoComplete="off"
          placeholder="e.g. Achterberg or 17/04/1979"
        />
      </div>
      <div aria-live="polite" className="text-sm text-muted" data-testid="booking-patient-count">
        {search.state === "loading"
          ? "Searching…"
          : current
            ? current.total === 0
              ? "No patient matches; register them below."
              : `${matchCount(current.total, current.totalIsExact)}${current.results.length < current.total ? ` · ${current.results.length} shown` : ""}.`
            : null}
      </div>
      {options.length ? (
        <ul className="max-h-56 space-y-1 overflow-y-auto rounded-md border border-line p-2">
          {options.map((p) => (
            <li key={p.id}>
              <label className="flex cursor-pointer items-center gap-3 rounded px-2 py-1.5 hover:bg-canvas">
                <input
                  type="radio"
                  name="patientId"
                  value={p.id}
                  checked={chosen?.id === p.id}
                  onChange={() => setChosen(p)}
                  className="size-4 accent-accent-700"
                />
                <span>
                  <span className="font-semibold">{p.name}</span>
                  <span className="text-sm text-muted">
                    {" "}
                    · born {formatDob(p.dateOfBirth)}
                    {p.email ? ` · ${p.email}` : ""}
                  </span>
                </span>
              </label>
            </li>
          ))}
        </ul>
      ) : null}
      {current && current.results.length < current.total ? (
        <Button
          type="button"
          variant="secondary"
          pending={search.state !== "idle"}
          onClick={() =>
            search.load(`/api/patients?q=${encodeURIComponent(current.q)}&offset=${current.results.length}`)
          }
        >
          Show more patients
        </Button>
      ) : null}
      <ErrorList id={`${id}-err`} errors={errors} />
      <details className="rounded-md border border-line p-3">
        <summary className="cursor-pointer text-sm font-semibold text-accent-700">Register a new patient</summary>
        {duplicates.length ? (
          <div className="mt-3">
            <DuplicateWarning
              duplicates={duplicates}
              onChoose={takeExisting}
              confirm={
                <label className="mt-3 flex items-center gap-2 font-semibold">
                  <input
                    type="checkbox"
                    checked={confirmDuplicate}
                    onChange={(e) => setConfirmDuplicate(e.target.checked)}
                    className="size-4"
                  />
                  This is a different person: register anyway
                </label>
              }
            />
          </div>
        ) : (register.data?.error || register.data?.detail) && register.data !== dismissed ? (
          <p className="mt-3 text-sm font-semibold text-red-800" role="alert">
            {register.data.error ?? register.data.detail}
          </p>
        ) : null}
        <div className="mt-3 grid gap-3 sm:grid-cols-2">
          {(
            [
              ["firstName", "First name", "text"],
              ["lastName", "Last name", "text"],
              ["dateOfBirth", "Date of birth", "date"],
              ["email", "E-mail (optional)", "email"],
              ["phone", "Phone (optional)", "tel"],
            ] as const
          ).map(([key, label, type]) => (
            <div key={key}>
              <label htmlFor={`${id}-new-${key}`} className="mb-1 block text-sm font-semibold">
                {label}
              </label>
              <Input
                id={`${id}-new-${key}`}
                type={type}
                value={newPatient[key]}
                onChange={(e) => setNewPatient((v) => ({ ...v, [key]: e.target.value }))}
                aria-invalid={regErrors[key]?.length ? true : undefined}
                aria-describedby={regErrors[key]?.length ? `${id}-new-${key}-err` : undefined}
              />
              <ErrorList id={`${id}-new-${key}-err`} errors={regErrors[key]} />
            </div>
          ))}
        </div>
        <Button
          type="button"
          variant="secondary"
          className="mt-3"
          pending={register.state !== "idle"}
          onClick={() => void register.submit({ ...newPatient, confirmDuplicate: confirmDuplicate ? "yes" : "" })}
        >
          Register and choose
        </Button>
      </details>
    </fieldset>
  );
}
