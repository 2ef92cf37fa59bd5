import { useId, useState } from "react";
import { ErrorList } from "~/components/forms";
import { Button } from "~/components/ui/button";
import { Input } from "~/components/ui/input";

import { PatientSearch, type PatientSearchHit } from "~/components/patient-search";
import { DuplicateWarning, type Duplicate } from "~/components/patients/duplicate-warning";
import type { PatientOption } from "./booking-form";

const hitOf = (p: PatientOption): PatientSearchHit => ({ phone: null, ...p });

/**
 * The booking form's patient: the patients page's own type-ahead over the whole register (posts
 * `patientId`), and a quick registration for someone new, who is then chosen.
 */
export function PatientPicker({ initial, errors }: { initial: PatientOption | null; errors?: string[] }) {
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
  const [chosen, setChosen] = useState<PatientSearchHit | null>(initial ? hitOf(initial) : null);
  // Bumped when a patient is chosen from outside the search (registered here, or a likely
  // duplicate taken instead), so the search starts again showing that choice.
  const [picked, setPicked] = useState(0);
  const [newPatient, setNewPatient] = useState({ firstName: "", lastName: "", dateOfBirth: "", email: "", phone: "" });
  const [confirmDuplicate, setConfirmDuplicate] = useState(false);
  const [dismissed, setDismissed] = useState<unknown>(null);
  const id = useId();

  // A patient just registered here is chosen and the quick form emptied.
  const [registeredSeen, setRegisteredSeen] = useState(register.data);
  if (register.data !== registeredSeen) {
    setRegisteredSeen(register.data);
    const p = register.data?.patient;
    if (p) {
      setChosen(hitOf(p));
      setPicked((n) => n + 1);
      setNewPatient({ firstName: "", lastName: "", dateOfBirth: "", email: "", phone: "" });
      setConfirmDuplicate(false);
    }
  }

  function takeExisting(d: Duplicate) {
    setChosen({ ...d });
    setPicked((n) => n + 1);
    setNewPatient({ firstName: "", lastName: "", dateOfBirth: "", email: "", phone: "" });
    setConfirmDuplicate(false);
    setDismissed(register.data);
  }

  const regErrors = register.data?.fieldErrors ?? {};
  const duplicates = register.data && register.data !== dismissed ? (register.data.duplicates ?? []) : [];
  return (
    <div className="space-y-3">
      <PatientSearch
        key={picked}
        label="Patient"
        name="patientId"
        initial={chosen}
        onChoose={setChosen}
        invalid={!!errors?.length}
        describedBy={errors?.length ? `${id}-err` : undefined}
      />
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
    </div>
  );
}
