/** What follows the clinical sections: signing, addenda and the prescriptions issued from the exam. */
import { useContext, useEffect, useRef, useState } from "react";
import { Form, useActionData, useNavigation } from "react-router";
import type { Route } from "./+types/exam";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Notice } from "~/components/ui/notice";
import { EXAM_SECTIONS, NO_FINAL_WARNING, sectionTitle, titleOf } from "~/lib/exam/section-list";
import { formatDate } from "~/lib/format";
import { ExamInput, ExamPageContext, STATE_WORDS, type SectionState } from "./exam-form";
import { RequiredMark } from "./exam-inputs";
import { applyValues } from "./section-drafts";

type LoaderData = Route.ComponentProps["loaderData"];

export function SignCard({
  states,
  canSign,
  examiner,
  hasFinal,
}: {
  states: Record<string, SectionState>;
  canSign: boolean;
  examiner: string;
  hasFinal: boolean;
}) {
  const navigation = useNavigation();
  const pending = Object.entries(states)
    .filter(([, s]) => s === "unsaved" || s === "saving" || s === "failed")
    .map(([k, s]) => `${titleOf(k)} (${STATE_WORDS[s].toLowerCase()})`);
  const actionData = useActionData<{ intent?: string; message?: string; confirm?: string[] }>();
  const mine = actionData?.intent === "sign" ? actionData : undefined;
  const [asked, setAsked] = useState(false);
  const warningRef = useRef<HTMLDivElement>(null);
  const here = [
    ...(hasFinal ? [] : [NO_FINAL_WARNING]),
    ...(pending.length
      ? [`Not saved yet: ${pending.join(", ")}. Signing now leaves what is typed there out of the exam.`]
      : []),
  ];
  const warnings = [...new Set([...(asked ? here : []), ...(mine?.confirm ?? [])])];
  useEffect(() => {
    if (warnings.length) warningRef.current?.focus();
  }, [warnings.length]);
  return (
    <Card title="Sign the exam">
      <p className="mb-3 text-sm text-muted">
        A signed exam is locked. Later corrections are added as addenda that record who made them and when.
      </p>
      {mine?.message && !mine.confirm ? <Notice tone="error" title={mine.message} /> : null}
      {pending.length && !warnings.length ? (
        <Notice tone="warning" title="Some sections are not saved yet">
          Wait for every section to show “Saved”, or correct the fields it names: {pending.join(", ")}.
        </Notice>
      ) : null}
      {!canSign ? (
        <Notice tone="info" title={`Only the examining clinician (${examiner}) signs this exam.`}>
          Once it is signed you can countersign it or add an addendum.
        </Notice>
      ) : (
        <Form
          method="post"
          className="mt-3"
          onSubmit={(e) => {
            const submitter = (e.nativeEvent as SubmitEvent).submitter;
            if (submitter?.getAttribute("name") === "confirmed" || !here.length) return;
            e.preventDefault();
            setAsked(true);
          }}
        >
          <input type="hidden" name="intent" value="sign" />
          {warnings.length ? (
            <div ref={warningRef} tabIndex={-1} className="mb-3 outline-none" data-testid="sign-warnings">
              <Notice tone="warning" title="Check before signing">
                <ul className="list-disc pl-5">
                  {warnings.map((w) => (
                    <li key={w}>{w}</li>
                  ))}
                </ul>
                <p className="mt-1">You can still sign; the exam is then locked and corrected only by addendum.</p>
              </Notice>
              <div className="mt-3 flex flex-wrap gap-2">
                <Button type="submit" name="confirmed" value="yes" className="min-h-11">
                  Sign anyway
                </Button>
                <Button type="button" variant="secondary" className="min-h-11" onClick={() => setAsked(false)}>
                  Keep editing
                </Button>
              </div>
            </div>
          ) : (
            <Button
              type="submit"
              className="min-h-11"
              pending={navigation.state === "submitting" && navigation.formData?.get("intent") === "sign"}
            >
              Sign exam
            </Button>
          )}
        </Form>
      )}
    </Card>
  );
}

const FINAL_FIELDS = [
  ["rx", "sphere, cylinder and axis"],
  ["add", "add"],
  ["va", "VA"],
] as const;

export function Addenda({
  addenda,
  hasFinal,
  subjective,
}: {
  addenda: LoaderData["addenda"];
  hasFinal: boolean;
  /** The signed exam's subjective refraction, by field name (right_rx, right_add, …). */
  subjective: Record<string, string>;
}) {
  const actionData = useActionData<{ intent?: string; message?: string; errors?: Record<string, string[]> }>();
  const { timeZone } = useContext(ExamPageContext);
  const mine = actionData?.intent === "addendum" ? actionData : undefined;
  const errors = mine?.errors ?? {};
  const formRef = useRef<HTMLFormElement>(null);
  const hasSubjective = Object.values(subjective).some(Boolean);
  function fillFromSubjective() {
    const form = formRef.current;
    if (!form) return;
    applyValues(form, Object.entries(subjective), (name) => /^(right|left)_(rx|add|va)$/.test(name));
    const part = form.elements.namedItem("section") as HTMLInputElement | null;
    const body = form.elements.namedItem("body") as HTMLTextAreaElement | null;
    if (part && !part.value) part.value = sectionTitle("refraction:final");
    if (body && !body.value) body.value = "Final refraction given after signing: as the subjective refraction.";
  }
  return (
    <section id="addenda">
      <Card title="Addenda">
        {addenda.length ? (
          <ol className="mb-4 space-y-3">
            {addenda.map((a) => (
              <li key={a.id} className="rounded-md border border-line p-3">
                <p className="text-sm text-muted">
                  {a.section} · {a.author} · {formatDate(a.createdAt, { timeZone, time: true })}
                </p>
                <p className="mt-1 whitespace-pre-wrap">{a.body}</p>
              </li>
            ))}
          </ol>
        ) : (
          <p className="mb-4 text-muted">No addenda.</p>
        )}
        <Form ref={formRef} method="post" className="space-y-3">
          <input type="hidden" name="intent" value="addendum" />
          {mine?.message ? <Notice tone="error" title={mine.message} /> : null}
          <div className="grid gap-3 sm:grid-cols-[14rem_1fr] sm:items-end">
            <div>
              <div className="mb-1 flex items-baseline">
                <label htmlFor="ad-section" className="block text-sm font-semibold">
                  Part of the exam
                </label>
                <RequiredMark />
              </div>
              <input
                id="ad-section"
                name="section"
                list="ad-section-titles"
                aria-required="true"
                className="block w-full rounded-md border border-line px-3 py-2"
                aria-invalid={errors.section ? true : undefined}
                aria-describedby={errors.section ? "ad-section-error" : undefined}
              />
              <datalist id="ad-section-titles">
                {EXAM_SECTIONS.map((x) => (
                  <option key={x.id} value={x.title} />
                ))}
              </datalist>
              {errors.section ? (
                <p id="ad-section-error" className="mt-1 text-sm font-semibold text-red-800">
                  ✕ {errors.section[0]}
                </p>
              ) : null}
            </div>
            <div>
              <div className="mb-1 flex items-baseline">
                <label htmlFor="ad-body" className="block text-sm font-semibold">
                  Correction
                </label>
                <RequiredMark />
              </div>
              <textarea
                id="ad-body"
                name="body"
                rows={2}
                aria-required="true"
                className="block w-full rounded-md border border-line px-3 py-2"
                aria-invalid={errors.body ? true : undefined}
                aria-describedby={errors.body ? "ad-body-error" : undefined}
              />
              {errors.body ? (
                <p id="ad-body-error" className="mt-1 text-sm font-semibold text-red-800">
                  ✕ {errors.body[0]}
                </p>
              ) : null}
            </div>
          </div>
          {hasFinal ? null : (
            <fieldset className="rounded-md border border-line p-3">
              <legend className="px-1 text-sm font-bold">Final refraction (optional)</legend>
              <p className="mb-2 text-sm text-muted">
                This exam was signed without a final refraction. Give it here and a prescription can be issued from it;
                the addendum records who gave it and when.
              </p>
              {hasSubjective ? (
                <Button type="button" variant="secondary" className="mb-3 min-h-11" onClick={fillFromSubjective}>
                  Use the subjective refraction
                </Button>
              ) : null}
              <div className="grid gap-3 sm:grid-cols-3">
                {(["right", "left"] as const).flatMap((eye) =>
                  FINAL_FIELDS.map(([part, words]) => (
                    <ExamInput
                      key={`${eye}_${part}`}
                      id={`ad-${eye}-${part}`}
                      name={`${eye}_${part}`}
                      label={`${eye === "right" ? "Right" : "Left"} final ${words}`}
                      defaultValue=""
                    />
                  )),
                )}
              </div>
              {Object.entries(errors).some(([k]) => /^(right|left)_/.test(k)) ? (
                <ul className="mt-2 list-disc pl-5 text-sm font-semibold text-red-800">
                  {Object.entries(errors)
                    .filter(([k]) => /^(right|left)_/.test(k))
                    .flatMap(([, m]) => m)
                    .map((m) => (
                      <li key={m}>{m}</li>
                    ))}
                </ul>
              ) : null}
            </fieldset>
          )}
          <Button type="submit" className="min-h-11">
            Add addendum
          </Button>
        </Form>
      </Card>
    </section>
  );
}
