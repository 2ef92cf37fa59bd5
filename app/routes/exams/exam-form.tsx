import { dateTimeFormat } from "~/lib/format/intl";
import { createContext, useCallback, useContext, useEffect, useRef, useState, type ReactNode } from "react";
import { useFetcher } from "react-router";
import { Card } from "~/components/ui/card";
import { Notice, StatusBadge } from "~/components/ui/notice";
import type { ReferralPrompt } from "~/lib/optics";
import { Button } from "~/components/ui/button";
import type { StoredSectionState } from "~/lib/exam/section-list";
import { ErrorsContext, ReadOnlyContext } from "./exam-inputs";
import { applyValues, clearDraft, formEntries, readDraft, sectionFormId, writeDraft } from "./section-drafts";

export { ExamCheckbox, ExamInput, ExamSelect, ExamTextarea } from "./exam-inputs";

export type SaveReply =
  | { ok: true; section: string; savedAt: string }
  | { ok: false; section: string; message: string; errors?: Record<string, string[]> };

export type SectionState = "empty" | "saved" | "unsaved" | "saving" | "failed";

/** How each state reads, in words (the badge adds its icon; colour is only a third cue). */
export const STATE_WORDS: Record<SectionState, string> = {
  empty: "Nothing entered yet",
  saved: "Saved",
  unsaved: "Unsaved changes",
  saving: "Saving…",
  failed: "Not saved",
};
export const STATE_TONE = {
  empty: "info",
  saved: "success",
  unsaved: "warning",
  saving: "info",
  failed: "error",
} as const satisfies Record<SectionState, string>;

/** Which sections have unsaved work, so signing warns about them, and the section menu shows each state. */
export const DirtyContext = createContext<{
  set: (section: string, state: SectionState) => void;
  states: Record<string, SectionState>;
}>({
  set: () => undefined,
  states: {},
});

/** The exam the sections belong to and what the server knows of each section's saves. */
export const ExamPageContext = createContext<{
  examId: string;
  stored: Record<string, StoredSectionState>;
  recorded: (section: string) => boolean;
  /** The practice's time zone: times are written on its wall clock, wherever the page is rendered. */
  timeZone: string;
}>({ examId: "", stored: {}, recorded: () => false, timeZone: "UTC" });

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

const clock = (iso: string, timeZone: string) =>
  dateTimeFormat("en-GB", { timeZone, hour: "2-digit", minute: "2-digit", hourCycle: "h23" }).format(new Date(iso));

/**
 * One exam section: a fetcher form posting `intent=save` and `section`, saved automatically a
 * moment after typing stops and when focus leaves the section. Typed text stays in the fields
 * whatever the server answers; a refused save shows why. After a reload the section shows where
 * it stands: saved (with the time), typed but not saved (kept in this tab), or refused (the
 * server kept what was typed and why).
 */
export function SectionForm({
  section,
  title,
  readOnly,
  children,
  prompts,
  description,
}: {
  section: string;
  title: string;
  readOnly: boolean;
  children: ReactNode;
  prompts?: ReferralPrompt[];
  description?: ReactNode;
}) {
  const fetcher = useFetcher<SaveReply>({ key: `section-${section}` });
  const formRef = useRef<HTMLFormElement>(null);
  const timer = useRef<ReturnType<typeof setTimeout> | null>(null);
  const restoring = useRef(false);
  const [dirty, setDirty] = useState(false);
  const [restored, setRestored] = useState<{ message: string; errors: Record<string, string[]> } | null>(null);
  const [fromTab, setFromTab] = useState(false);
  const dirtyTracker = useContext(DirtyContext);
  const page = useContext(ExamPageContext);
  const stored = page.stored[section];
  const reply = fetcher.data && fetcher.data.section === section ? fetcher.data : undefined;
  const savedAt = reply?.ok ? reply.savedAt : (stored?.savedAt ?? null);
  const state: SectionState =
    fetcher.state !== "idle"
      ? "saving"
      : dirty
        ? "unsaved"
        : reply
          ? reply.ok
            ? "saved"
            : "failed"
          : restored
            ? "failed"
            : savedAt || page.recorded(section)
              ? "saved"
              : "empty";

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

  // After a reload: put back what was typed here and not saved, or what the server refused.
  useEffect(() => {
    if (readOnly) {
      // A signed exam takes no more typing: nothing kept for it in this tab is of use.
      clearDraft(page.examId, section);
      return;
    }
    if (!formRef.current) return;
    const local = readDraft(page.examId, section);
    const newest = [stored?.savedAt, stored?.refused?.at].filter(Boolean).sort().at(-1);
    const put = (values: [string, string][]) => {
      restoring.current = true;
      try {
        applyValues(formRef.current!, values);
      } finally {
        restoring.current = false;
      }
    };
    // Session storage and the form's DOM exist only in the browser, after hydration: these state
    // updates follow that outside state once, as the page first shows.
    /* eslint-disable react-hooks/set-state-in-effect */
    if (local && (!newest || local.at > newest)) {
      put(local.values);
      if (local.failed) setRestored({ message: local.failed, errors: {} });
      else {
        setDirty(true);
        setFromTab(true);
      }
    } else if (stored?.refused) {
      if (local) clearDraft(page.examId, section);
      put(stored.refused.values);
      setRestored({ message: stored.refused.message, errors: stored.refused.errors });
    } else if (local) clearDraft(page.examId, section);
    /* eslint-enable react-hooks/set-state-in-effect */
    // Only once, when the section first appears.
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, []);

  // Keep this tab's copy in step with the server's answer.
  useEffect(() => {
    if (!reply || fetcher.state !== "idle" || readOnly) return;
    if (reply.ok) clearDraft(page.examId, section);
    else {
      const draft = readDraft(page.examId, section);
      if (draft) writeDraft(page.examId, section, { ...draft, failed: reply.message });
    }
  }, [reply, fetcher.state, readOnly, page.examId, section]);

  function save() {
    if (timer.current) clearTimeout(timer.current);
    if (!formRef.current) return;
    setDirty(false);
    setFromTab(false);
    fetcher.submit(formRef.current, { method: "post" });
  }
  function changed() {
    if (readOnly || restoring.current || !formRef.current) return;
    setDirty(true);
    writeDraft(page.examId, section, { at: new Date().toISOString(), values: formEntries(formRef.current) });
    if (timer.current) clearTimeout(timer.current);
    timer.current = setTimeout(save, AUTOSAVE_MS);
  }

  const failure = reply && !reply.ok ? reply : !reply && restored ? restored : null;
  const statusText =
    state === "saved"
      ? savedAt
        ? `Saved ${clock(savedAt, page.timeZone)}`
        : "Saved (time not recorded)"
      : state === "unsaved" && fromTab
        ? "Unsaved changes (kept in this tab)"
        : STATE_WORDS[state];

  return (
    <ErrorsContext.Provider value={failure ? ("errors" in failure ? (failure.errors ?? {}) : {}) : {}}>
      <ReadOnlyContext.Provider value={readOnly}>
        <div id={sectionAnchor(section)} className="scroll-mt-24">
          <Card
            title={title}
            actions={
              readOnly ? (
                <StatusBadge tone="info">Signed · read-only</StatusBadge>
              ) : (
                <span role="status" aria-live="polite" data-section-status={section} data-state={state}>
                  <StatusBadge tone={STATE_TONE[state]}>{statusText}</StatusBadge>
                </span>
              )
            }
          >
            {description ? <div className="mb-4 text-sm text-muted">{description}</div> : null}
            <fetcher.Form
              ref={formRef}
              id={sectionFormId(section)}
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
              {!readOnly && (state === "failed" || (state === "unsaved" && fromTab)) ? (
                <div className="mt-3">
                  <Button type="submit" variant="secondary" className="min-h-11">
                    Save {title.toLowerCase()} now
                  </Button>
                </div>
              ) : null}
            </fetcher.Form>
            {failure && state === "failed" ? (
              <div className="mt-4">
                <Notice tone="error" title={`Not saved: ${failure.message}`}>
                  {"errors" in failure && failure.errors ? (
                    <ul className="list-disc pl-5">
                      {Object.values(failure.errors)
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
