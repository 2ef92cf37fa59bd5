import { createContext, useCallback, useContext, useEffect, useRef, useState, type ReactNode } from "react";
import { useFetcher } from "react-router";
import { Card } from "~/components/ui/card";
import { Icon } from "~/components/ui/icon";
import { Notice, StatusBadge } from "~/components/ui/notice";
import type { ReferralPrompt } from "~/lib/optics";

export type SaveReply =
  | { ok: true; section: string; savedAt: string }
  | { ok: false; section: string; message: string; errors?: Record<string, string[]> };

type SectionState = "saved" | "unsaved" | "saving" | "failed";

/** Which sections have unsaved work, so signing waits for them. */
export const DirtyContext = createContext<{
  set: (section: string, state: SectionState) => void;
  states: Record<string, SectionState>;
}>({
  set: () => undefined,
  states: {},
});

export function useDirtyTracker() {
  const [states, setStates] = useState<Record<string, SectionState>>({});
  const set = useCallback(
    (section: string, state: SectionState) => setStates((s) => (s[section] === state ? s : { ...s, [section]: state })),
    [],
  );
  return { states, set };
}

const ErrorsContext = createContext<Record<string, string[]>>({});
const ReadOnlyContext = createContext(false);

const AUTOSAVE_MS = 900;

/** The page anchor of a section ("refraction:final" → "section-refraction-final"). */
export const sectionAnchor = (section: string) => `section-${section.replace(/[^a-z0-9]+/gi, "-")}`;

/**
 * One exam section: a fetcher form posting `intent=save` and `section`, saved automatically a
 * moment after typing stops and when focus leaves the section. Typed text stays in the fields
 * whatever the server answers; a refused save shows why.
 */
export function SectionForm({
  section,
  title,
  readOnly,
  children,
  prompts,
  lastSavedAt,
  description,
}: {
  section: string;
  title: string;
  readOnly: boolean;
  children: ReactNode;
  prompts?: ReferralPrompt[];
  lastSavedAt?: string | null;
  description?: ReactNode;
}) {
  const fetcher = useFetcher<SaveReply>({ key: `section-${section}` });
  const formRef = useRef<HTMLFormElement>(null);
  const timer = useRef<ReturnType<typeof setTimeout> | null>(null);
  const [dirty, setDirty] = useState(false);
  const dirtyTracker = useContext(DirtyContext);
  const reply = fetcher.data && fetcher.data.section === section ? fetcher.data : undefined;
  const state: SectionState =
    fetcher.state !== "idle" ? "saving" : dirty ? "unsaved" : reply && !reply.ok ? "failed" : "saved";

  const trackState = dirtyTracker.set;
  useEffect(() => {
    trackState(section, state);
  }, [state, section, trackState]);
  useEffect(
    () => () => {
      if (timer.current) clearTimeout(timer.current);
    },
    [],
  );
  useEffect(() => {
    if (!dirty) return;
    const warn = (e: BeforeUnloadEvent) => e.preventDefault();
    window.addEventListener("beforeunload", warn);
    return () => window.removeEventListener("beforeunload", warn);
  }, [dirty]);

  function save() {
    if (timer.current) clearTimeout(timer.current);
    if (!formRef.current) return;
    setDirty(false);
    fetcher.submit(formRef.current, { method: "post" });
  }
  function changed() {
    if (readOnly) return;
    setDirty(true);
    if (timer.current) clearTimeout(timer.current);
    timer.current = setTimeout(save, AUTOSAVE_MS);
  }

  const savedAt = reply?.ok ? reply.savedAt : lastSavedAt;
  const statusText =
    state === "saving"
      ? "Saving…"
      : state === "unsaved"
        ? "Unsaved changes"
        : state === "failed"
          ? "Not saved"
          : savedAt
            ? `Saved ${new Date(savedAt).toLocaleTimeString("en-GB", { hour: "2-digit", minute: "2-digit" })}`
            : "Nothing entered yet";
  const tone = state === "failed" ? "error" : state === "saved" ? "success" : state === "saving" ? "info" : "warning";

  return (
    <ErrorsContext.Provider value={reply && !reply.ok ? (reply.errors ?? {}) : {}}>
      <ReadOnlyContext.Provider value={readOnly}>
        <div id={sectionAnchor(section)} className="scroll-mt-4">
          <Card
            title={title}
            actions={
              readOnly ? (
                <StatusBadge tone="info">Signed · read-only</StatusBadge>
              ) : (
                <span role="status" aria-live="polite" data-section-status={section}>
                  <StatusBadge tone={tone}>{statusText}</StatusBadge>
                </span>
              )
            }
          >
            {description ? <div className="mb-4 text-sm text-muted">{description}</div> : null}
            <fetcher.Form
              ref={formRef}
              method="post"
              onChange={changed}
              onInput={changed}
              onBlur={(e) => {
                if (dirty && !e.currentTarget.contains(e.relatedTarget as Node | null)) save();
              }}
              onSubmit={(e) => {
                e.preventDefault();
                save();
              }}
              aria-label={title}
            >
              <input type="hidden" name="intent" value="save" />
              <input type="hidden" name="section" value={section} />
              <fieldset disabled={readOnly} className="min-w-0">
                <legend className="sr-only">{title}</legend>
                {children}
              </fieldset>
            </fetcher.Form>
            {reply && !reply.ok && state === "failed" ? (
              <div className="mt-4">
                <Notice tone="error" title={`Not saved: ${reply.message}`}>
                  {reply.errors ? (
                    <ul className="list-disc pl-5">
                      {Object.values(reply.errors)
                        .flat()
                        .map((m) => (
                          <li key={m}>{m}</li>
                        ))}
                    </ul>
                  ) : null}
                  <p className="mt-1">What you typed is kept; correct it and the section saves again.</p>
                </Notice>
              </div>
            ) : null}
            {prompts?.length ? <PromptList prompts={prompts} /> : null}
          </Card>
        </div>
      </ReadOnlyContext.Provider>
    </ErrorsContext.Provider>
  );
}

export function PromptList({ prompts }: { prompts: ReferralPrompt[] }) {
  const refer = prompts.filter((p) => p.action !== "repeat measurement");
  const repeat = prompts.filter((p) => p.action === "repeat measurement");
  return (
    <>
      {refer.length ? (
        <div className="mt-4 space-y-2" data-testid="referral-prompts">
          {refer.map((p) => (
            <Notice key={`${p.code}-${p.eye}`} tone="warning" title={`Referral prompt: ${p.message}`}>
              <p>
                Rule: {p.rule} <span className="text-muted">Source: {p.source}.</span>
              </p>
              <p className="mt-1">
                Check the finding before referring; local law and licensed practice govern referrals.
              </p>
            </Notice>
          ))}
        </div>
      ) : null}
      {/* Advice to measure again is not a reason to refer: shown apart, in its own words. */}
      {repeat.length ? (
        <div className="mt-4 space-y-2" data-testid="repeat-advice">
          {repeat.map((p) => (
            <Notice key={`${p.code}-${p.eye}`} tone="info" title={`Repeat the measurement: ${p.message}`}>
              <p>
                Rule: {p.rule} <span className="text-muted">Source: {p.source}.</span>
              </p>
              <p className="mt-1">
                Advice to measure again before deciding, not a referral prompt: this reading alone is not a reason to
                refer.
              </p>
            </Notice>
          ))}
        </div>
      ) : null}
    </>
  );
}

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
      <label htmlFor={id} className={hideLabel ? "sr-only" : "mb-1 block text-sm font-semibold"}>
        {label}
      </label>
      <input
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
        className="block w-full rounded-md border border-line bg-white px-2 py-1.5 font-mono text-sm text-ink focus:border-accent-600 disabled:bg-canvas aria-[invalid=true]:border-red-700 aria-[invalid=true]:bg-red-50"
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
      <label htmlFor={id} className="flex items-start gap-2 text-sm">
        <input
          id={id}
          type="checkbox"
          name={name}
          defaultChecked={defaultChecked}
          aria-invalid={errorId ? true : undefined}
          aria-describedby={errorId}
          className="mt-0.5 size-5 shrink-0"
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
}: {
  id: string;
  name: string;
  label: string;
  defaultValue?: string;
  options: Record<string, string>;
  hideLabel?: boolean;
  emptyLabel?: string;
  onValue?: (value: string) => void;
}) {
  const serverErrors = useContext(ErrorsContext)[name];
  const errorId = serverErrors?.length ? `${id}-error` : undefined;
  return (
    <div>
      <label htmlFor={id} className={hideLabel ? "sr-only" : "mb-1 block text-sm font-semibold"}>
        {label}
      </label>
      <select
        id={id}
        name={name}
        defaultValue={defaultValue ?? ""}
        onChange={onValue ? (e) => onValue(e.target.value) : undefined}
        aria-invalid={errorId ? true : undefined}
        aria-describedby={errorId}
        className="block w-full rounded-md border border-line bg-white px-2 py-1.5 text-sm disabled:bg-canvas aria-[invalid=true]:border-red-700"
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
