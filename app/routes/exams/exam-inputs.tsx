/** The inputs of an exam section: they show the errors of the section's last refused save. */
import { createContext, useContext, useEffect, useRef, useState, type ReactNode } from "react";
import { Icon } from "~/components/ui/icon";

export const ErrorsContext = createContext<Record<string, string[]>>({});
export const ReadOnlyContext = createContext(false);

/** Text input of a section: label, inline error from the engine as you type, the server's error otherwise. */
export function ExamInput({
  id,
  name,
  label,
  defaultValue,
  validate,
  hideLabel = false,
  className = "",
  onValue,
  inputMode,
  type = "text",
  placeholder,
  echo,
  revalidateKey,
  max,
  required = false,
}: {
  id: string;
  name: string;
  label: string;
  defaultValue?: string;
  validate?: (value: string) => string | undefined;
  hideLabel?: boolean;
  className?: string;
  onValue?: (value: string) => void;
  inputMode?: "decimal" | "numeric" | "text";
  type?: string;
  placeholder?: string;
  /** What the value reads as, shown under the field before saving (e.g. "reads as 6/60, logMAR 1.00"). */
  echo?: (value: string) => string | undefined;
  /** Re-run validate and echo on the current text when this changes (e.g. the notation was changed). */
  revalidateKey?: string;
  max?: string;
  /** Shown as "(required)" beside the label and told to assistive technology; the server decides. */
  required?: boolean;
}) {
  const serverErrors = useContext(ErrorsContext)[name];
  const [clientError, setClientError] = useState<string | undefined>(() =>
    defaultValue && validate ? validate(defaultValue) : undefined,
  );
  const [echoText, setEchoText] = useState<string | undefined>(() =>
    defaultValue && echo ? echo(defaultValue) : undefined,
  );
  const [touched, setTouched] = useState(false);
  const timer = useRef<ReturnType<typeof setTimeout> | null>(null);
  const inputRef = useRef<HTMLInputElement>(null);
  const error = clientError ?? (touched ? undefined : serverErrors?.[0]);
  const errorId = error ? `${id}-error` : undefined;
  const echoId = !error && echoText ? `${id}-echo` : undefined;
  // New server errors are shown again even after the field was touched.
  const [errorsSeen, setErrorsSeen] = useState(serverErrors);
  if (serverErrors !== errorsSeen) {
    setErrorsSeen(serverErrors);
    setTouched(false);
  }
  useEffect(() => {
    if (revalidateKey === undefined || !inputRef.current) return;
    const v = inputRef.current.value;
    if (validate) setClientError(v ? validate(v) : undefined);
    if (echo) setEchoText(v ? echo(v) : undefined);
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, [revalidateKey]);
  return (
    <div className={className}>
      <FieldLabel id={id} label={label} hideLabel={hideLabel} required={required} />
      <input
        aria-required={required || undefined}
        ref={inputRef}
        id={id}
        name={name}
        type={type}
        max={max}
        defaultValue={defaultValue}
        inputMode={inputMode}
        placeholder={placeholder}
        autoComplete="off"
        spellCheck={false}
        aria-invalid={error ? true : undefined}
        aria-describedby={errorId ?? echoId}
        onChange={(e) => {
          const v = e.target.value;
          setTouched(true);
          onValue?.(v);
          if (!validate && !echo) return;
          if (timer.current) clearTimeout(timer.current);
          timer.current = setTimeout(() => {
            if (validate) setClientError(validate(v));
            if (echo) setEchoText(v ? echo(v) : undefined);
          }, 250);
        }}
        onBlur={(e) => {
          if (validate) setClientError(validate(e.target.value));
          if (echo) setEchoText(e.target.value ? echo(e.target.value) : undefined);
        }}
        className="exam-field exam-field-mono"
      />
      {error ? (
        <p id={errorId} className="mt-1 flex items-start gap-1 text-xs font-semibold text-red-800" data-inline-error>
          <Icon name="cross" className="mt-0.5 size-3 shrink-0" />
          {error}
        </p>
      ) : echoId ? (
        <p id={echoId} className="mt-1 text-xs text-muted" data-echo>
          {echoText}
        </p>
      ) : null}
    </div>
  );
}

/** A checkbox of a section ("on" when ticked), with the server's error for it. */
export function ExamCheckbox({
  id,
  name,
  label,
  defaultChecked,
}: {
  id: string;
  name: string;
  label: ReactNode;
  defaultChecked?: boolean;
}) {
  const serverErrors = useContext(ErrorsContext)[name];
  const errorId = serverErrors?.length ? `${id}-error` : undefined;
  return (
    <div>
      <label htmlFor={id} className="flex min-h-11 items-center gap-2 py-1 text-sm">
        <input
          id={id}
          type="checkbox"
          name={name}
          defaultChecked={defaultChecked}
          aria-invalid={errorId ? true : undefined}
          aria-describedby={errorId}
          className="size-5 shrink-0"
        />
        <span>{label}</span>
      </label>
      {errorId ? (
        <p id={errorId} className="mt-1 text-xs font-semibold text-red-800">
          <span aria-hidden="true">✕ </span>
          {serverErrors![0]}
        </p>
      ) : null}
    </div>
  );
}

export function ExamSelect({
  id,
  name,
  label,
  defaultValue,
  options,
  hideLabel = false,
  emptyLabel = "—",
  onValue,
  required = false,
}: {
  id: string;
  name: string;
  label: string;
  defaultValue?: string;
  options: Record<string, string>;
  hideLabel?: boolean;
  emptyLabel?: string;
  onValue?: (value: string) => void;
  required?: boolean;
}) {
  const serverErrors = useContext(ErrorsContext)[name];
  const errorId = serverErrors?.length ? `${id}-error` : undefined;
  return (
    <div>
      <FieldLabel id={id} label={label} hideLabel={hideLabel} required={required} />
      <select
        aria-required={required || undefined}
        id={id}
        name={name}
        defaultValue={defaultValue ?? ""}
        onChange={onValue ? (e) => onValue(e.target.value) : undefined}
        aria-invalid={errorId ? true : undefined}
        aria-describedby={errorId}
        className="exam-field"
      >
        <option value="">{emptyLabel}</option>
        {Object.entries(options).map(([k, v]) => (
          <option key={k} value={k}>
            {v}
          </option>
        ))}
      </select>
      {errorId ? (
        <p id={errorId} className="mt-1 text-xs font-semibold text-red-800">
          <span aria-hidden="true">✕ </span>
          {serverErrors![0]}
        </p>
      ) : null}
    </div>
  );
}

export function ExamTextarea({
  id,
  name,
  label,
  defaultValue,
  rows = 2,
}: {
  id: string;
  name: string;
  label: string;
  defaultValue?: string;
  rows?: number;
}) {
  return (
    <div>
      <label htmlFor={id} className="mb-1 block text-sm font-semibold">
        {label}
      </label>
      <textarea
        id={id}
        name={name}
        rows={rows}
        defaultValue={defaultValue}
        className="block w-full rounded-md border border-line bg-white px-3 py-2 text-sm disabled:bg-canvas"
      />
    </div>
  );
}

/** A field's label; a required field's mark sits beside it, so the field's name stays its label. */
function FieldLabel({
  id,
  label,
  hideLabel,
  required,
}: {
  id: string;
  label: string;
  hideLabel: boolean;
  required: boolean;
}) {
  const text = (
    <label htmlFor={id} className={hideLabel ? "sr-only" : "block text-sm font-semibold"}>
      {label}
    </label>
  );
  if (hideLabel) return text;
  return (
    <div className="mb-1 flex flex-wrap items-baseline">
      {text}
      {required ? <RequiredMark /> : null}
    </div>
  );
}

/**
 * The visible mark of a required field: a word, not a colour or a lone asterisk. Assistive
 * technology hears it from the field's aria-required, so the mark stays out of the field's name.
 */
export function RequiredMark() {
  return (
    <span aria-hidden="true" className="ml-1 text-xs font-semibold text-red-800">
      (required)
    </span>
  );
}
