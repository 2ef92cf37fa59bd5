/** The letter form shared by the compose page and a draft's page: one schema for client and server. */
import { getFormProps, getSelectProps, getTextareaProps, useForm, type SubmissionResult } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { Form, useNavigation } from "react-router";
import { z } from "zod";
import { ErrorList, SelectField } from "~/components/forms";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Textarea } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";
import {
  findingKey,
  promptValue,
  URGENCIES,
  URGENCY_LABEL,
  urgencyOverrideProblem,
  type TimeFrames,
  type Urgency,
} from "~/lib/referrals";
import { formatDate } from "~/lib/format";

export const letterSchema = z
  .object({
    intent: z.enum(["create", "save", "send"]),
    recipientId: z.uuid({ error: "Choose a recipient from the list." }).optional(),
    urgency: z.enum(URGENCIES, { error: "Choose the urgency." }),
    /** The proposal shown on the page, for the check in the browser; the server checks against its own record. */
    proposedUrgency: z.enum(URGENCIES).optional(),
    urgencyOverrideReason: z.string().trim().max(600, "Keep the reason under 600 characters.").default(""),
    reason: z.string().trim().max(600, "Keep the reason under 600 characters.").default(""),
    body: z.string().trim().max(8000, "The letter text is too long (8,000 characters at most).").default(""),
    relevantHistory: z.string().trim().max(8000, "The history is too long (8,000 characters at most).").default(""),
    additionalFindings: z.string().trim().max(4000, "Other findings: 4,000 characters at most.").default(""),
    selectedFindings: z.array(z.string().max(80)).max(40).default([]),
    attachmentIds: z.array(z.uuid()).max(20, "At most 20 enclosures.").default([]),
  })
  .superRefine((v, ctx) => {
    const problem = urgencyOverrideProblem(v.urgency, v.proposedUrgency ?? null, v.urgencyOverrideReason);
    if (problem) ctx.addIssue({ code: "custom", path: ["urgencyOverrideReason"], message: problem });
  });
export type LetterValues = z.infer<typeof letterSchema>;

export type Prompt = {
  code: string;
  eye: string;
  message: string;
  value: number | string;
  rule: string;
  source: string;
};
export type Recipient = { id: string; name: string; clinic: string; email: string | null; preferredDelivery: string };
export type Triage = { urgency: Urgency | null; reasons: { urgency: Urgency; text: string; source: string }[] };
export type Upload = {
  id: string;
  originalName: string;
  kind: string;
  description: string;
  contentType: string;
  createdAt: string;
};

const EYE = { right: "Right eye", left: "Left eye", both: "Both eyes" } as Record<string, string>;

export function LetterForm({
  defaults,
  prompts,
  recipients,
  uploads,
  timeFrames,
  lastResult,
  mode,
  triage,
}: {
  defaults: Partial<Record<keyof LetterValues, string | string[]>>;
  prompts: Prompt[];
  recipients: Recipient[];
  uploads: Upload[];
  timeFrames: TimeFrames;
  lastResult: SubmissionResult<string[]> | null | undefined;
  mode: "create" | "draft";
  triage: Triage;
}) {
  const navigation = useNavigation();
  const busy = navigation.state === "submitting" ? String(navigation.formData?.get("intent") ?? "") : "";
  const [form, fields] = useForm({
    id: "letter",
    lastResult: navigation.state === "idle" ? lastResult : null,
    defaultValue: defaults,
    onValidate: ({ formData }) => parseWithZod(formData, { schema: letterSchema }),
    shouldValidate: "onBlur",
  });
  const selected = new Set((defaults.selectedFindings as string[] | undefined) ?? []);
  const attached = new Set((defaults.attachmentIds as string[] | undefined) ?? []);
  const chosen = recipients.find((r) => r.id === defaults.recipientId);
  const proposed = triage.urgency;
  const fieldProblems = Object.entries(form.allErrors)
    .filter(([name]) => name !== "" && name !== form.id)
    .flatMap(([, messages]) => messages);
  return (
    <Form method="post" {...getFormProps(form)} className="space-y-6">
      {form.errors?.length ? (
        <Notice tone="error" title="Not sent">
          {form.errors.join(" ")}
        </Notice>
      ) : null}
      <Card title="Recipient and urgency">
        <div className="grid gap-4 sm:grid-cols-2">
          <SelectField
            label="Send to"
            errors={fields.recipientId.errors}
            selectProps={getSelectProps(fields.recipientId)}
          >
            <option value="">Choose a recipient…</option>
            {recipients.map((r) => (
              <option key={r.id} value={r.id}>
                {r.name}
                {r.clinic ? `, ${r.clinic}` : ""}
                {r.email ? "" : " (no e-mail)"}
              </option>
            ))}
          </SelectField>
          <SelectField label="Urgency" errors={fields.urgency.errors} selectProps={getSelectProps(fields.urgency)}>
            {URGENCIES.map((u) => (
              <option key={u} value={u}>
                {URGENCY_LABEL[u]} — within {timeFrames[u]} day{timeFrames[u] === 1 ? "" : "s"}
              </option>
            ))}
          </SelectField>
        </div>
        {proposed ? <input type="hidden" name={fields.proposedUrgency.name} value={proposed} /> : null}
        <div className="mt-4 rounded-md border border-line p-3 text-sm" data-testid="triage-proposal">
          {proposed ? (
            <>
              <p className="font-semibold">
                Triage proposes: {URGENCY_LABEL[proposed]} (within {timeFrames[proposed]} day
                {timeFrames[proposed] === 1 ? "" : "s"})
              </p>
              <ul className="mt-2 list-disc space-y-1 pl-5">
                {triage.reasons.map((r, i) => (
                  <li key={i}>
                    <span className="font-semibold">{URGENCY_LABEL[r.urgency]}:</span> {r.text}
                    <span className="block text-xs text-muted">Source: {r.source.replace(/\.+$/, "")}.</span>
                  </li>
                ))}
              </ul>
              <p className="mt-2 text-xs text-muted">
                A proposal from the exam findings for your judgement; local referral protocols govern. Choosing a lower
                urgency needs your reason, which is kept with the letter.
              </p>
            </>
          ) : (
            <p>
              Triage proposes no referral from the recorded findings. Refer on your own judgement; choose the urgency
              yourself.
            </p>
          )}
        </div>
        <div className="mt-4" hidden={!proposed}>
          <label htmlFor={fields.urgencyOverrideReason.id} className="mb-1 block text-sm font-semibold">
            Reason for a lower urgency than proposed (needed only when you choose lower)
          </label>
          <Textarea
            {...getTextareaProps(fields.urgencyOverrideReason)}
            rows={2}
            aria-invalid={fields.urgencyOverrideReason.errors?.length ? true : undefined}
            aria-describedby={
              fields.urgencyOverrideReason.errors?.length ? `${fields.urgencyOverrideReason.id}-error` : undefined
            }
          />
          <ErrorList id={`${fields.urgencyOverrideReason.id}-error`} errors={fields.urgencyOverrideReason.errors} />
        </div>
        {chosen && chosen.preferredDelivery !== "email" ? (
          <p className="mt-3 text-sm text-muted">
            {chosen.name} prefers letters by {chosen.preferredDelivery}. Dioptra e-mails the letter; print the PDF as
            well if needed.
          </p>
        ) : null}
        {recipients.length === 0 ? (
          <p className="mt-3 text-sm text-muted">
            The directory is empty: the practice owner adds recipients in Settings → Referral recipients.
          </p>
        ) : null}
      </Card>

      <Card title="Findings from the exam">
        <p className="mb-3 text-sm text-muted">
          Flagged from the exam as prompts for your judgement, not decisions. Keep those that lead you to refer; the
          letter shows each with its value, in plain words. Check the measurements before referring.
        </p>
        {prompts.length === 0 ? (
          <p className="mb-3 text-sm">No finding of this exam was flagged. Describe what leads you to refer below.</p>
        ) : null}
        <fieldset>
          <legend className="sr-only">Findings to include</legend>
          <ul className="space-y-3">
            {prompts.map((p) => {
              const key = findingKey(p);
              return (
                <li key={key} className="rounded-md border border-line p-3">
                  <label className="flex items-start gap-3">
                    <input
                      type="checkbox"
                      name={fields.selectedFindings.name}
                      value={key}
                      defaultChecked={selected.has(key)}
                      className="mt-1 size-4"
                    />
                    <span>
                      <span className="block font-semibold">{p.message}</span>
                      <span className="block text-sm">
                        {EYE[p.eye] ?? p.eye} · measured {promptValue(p)}
                      </span>
                      <span className="block text-xs text-muted">
                        Rule: {p.rule} Source: {p.source.replace(/\.+$/, "")}.
                      </span>
                    </span>
                  </label>
                </li>
              );
            })}
          </ul>
          <ErrorList errors={fields.selectedFindings.errors} />
        </fieldset>
        <div className="mt-4">
          <label htmlFor={fields.additionalFindings.id} className="mb-1 block text-sm font-semibold">
            Other findings (optional)
          </label>
          <Textarea
            {...getTextareaProps(fields.additionalFindings)}
            rows={3}
            aria-invalid={fields.additionalFindings.errors?.length ? true : undefined}
            aria-describedby={
              fields.additionalFindings.errors?.length ? `${fields.additionalFindings.id}-error` : undefined
            }
          />
          <ErrorList id={`${fields.additionalFindings.id}-error`} errors={fields.additionalFindings.errors} />
        </div>
      </Card>

      <Card title="Letter">
        <div className="space-y-4">
          <div>
            <label htmlFor={fields.reason.id} className="mb-1 block text-sm font-semibold">
              Reason for referral
            </label>
            <Textarea
              {...getTextareaProps(fields.reason)}
              rows={2}
              aria-invalid={fields.reason.errors?.length ? true : undefined}
              aria-describedby={fields.reason.errors?.length ? `${fields.reason.id}-error` : undefined}
            />
            <ErrorList id={`${fields.reason.id}-error`} errors={fields.reason.errors} />
          </div>
          <div>
            <label htmlFor={fields.body.id} className="mb-1 block text-sm font-semibold">
              Letter text
            </label>
            <Textarea {...getTextareaProps(fields.body)} rows={6} />
            <ErrorList errors={fields.body.errors} />
          </div>
          <div>
            <label htmlFor={fields.relevantHistory.id} className="mb-1 block text-sm font-semibold">
              Relevant history
            </label>
            <Textarea {...getTextareaProps(fields.relevantHistory)} rows={5} />
            <ErrorList errors={fields.relevantHistory.errors} />
          </div>
        </div>
      </Card>

      <Card title="Enclosures">
        {uploads.length === 0 ? (
          <p className="text-sm text-muted">
            This patient has no uploads. Field printouts and photographs uploaded to the chart can be enclosed here.
          </p>
        ) : (
          <fieldset>
            <legend className="mb-2 text-sm text-muted">
              PDFs and JPEG/PNG images are appended to the letter; other files are listed.
            </legend>
            <ul className="space-y-2">
              {uploads.map((u) => (
                <li key={u.id}>
                  <label className="flex items-start gap-3">
                    <input
                      type="checkbox"
                      name={fields.attachmentIds.name}
                      value={u.id}
                      defaultChecked={attached.has(u.id)}
                      className="mt-1 size-4"
                    />
                    <span>
                      <span className="font-semibold">{u.originalName}</span>
                      <span className="block text-sm text-muted">
                        {u.kind.replace(/_/g, " ")}
                        {u.description ? ` · ${u.description}` : ""} · {formatDate(u.createdAt)}
                      </span>
                    </span>
                  </label>
                </li>
              ))}
            </ul>
            <ErrorList errors={fields.attachmentIds.errors} />
          </fieldset>
        )}
      </Card>

      {/* An error on a field far up the page is repeated beside the buttons, so a click never seems to do nothing. */}
      {fieldProblems.length ? (
        <Notice tone="error" title={mode === "create" ? "Not saved" : "Not sent"}>
          <p>Correct the fields marked above:</p>
          <ul className="mt-1 list-disc pl-5" data-testid="letter-problems">
            {fieldProblems.map((m) => (
              <li key={m}>{m}</li>
            ))}
          </ul>
        </Notice>
      ) : null}
      <div className="flex flex-wrap gap-3">
        {mode === "create" ? (
          <Button type="submit" name="intent" value="create" pending={busy === "create"}>
            Save draft and preview
          </Button>
        ) : (
          <>
            <Button type="submit" name="intent" value="save" pending={busy === "save"}>
              Save draft and preview
            </Button>
            <p className="self-center text-sm text-muted">The letter is sent from below its preview.</p>
          </>
        )}
      </div>
    </Form>
  );
}

/** FormData → the form's values (for a form that failed the schema only in part). */
export function draftValuesOf(v: LetterValues) {
  return {
    recipientId: v.recipientId ?? null,
    urgency: v.urgency,
    urgencyOverrideReason: v.urgencyOverrideReason,
    reason: v.reason,
    body: v.body,
    relevantHistory: v.relevantHistory,
    additionalFindings: v.additionalFindings,
    selectedFindings: v.selectedFindings,
    attachmentIds: v.attachmentIds,
  };
}
