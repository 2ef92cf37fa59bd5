import { createContext, useCallback, useContext, useEffect, useRef, useState, type ReactNode } from "react";
import { useFetcher } from "react-router";
import { Card } from "~/components/ui/card";
import { Notice, StatusBadge } from "~/components/ui/notice";
import type { ReferralPrompt } from "~/lib/optics";
import { ErrorsContext, ReadOnlyContext } from "./exam-inputs";

export { ExamCheckbox, ExamInput, ExamSelect, ExamTextarea } from "./exam-inputs";

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
