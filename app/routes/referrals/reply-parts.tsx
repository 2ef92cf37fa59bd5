/** The recipient's reply page: its frame, the confirmation after an action and the last submission's result. */
import { type SubmissionResult } from "@conform-to/react";
import { Field } from "~/components/forms";
import { useNavigation } from "react-router";
import { Notice } from "~/components/ui/notice";

export type ActionData = { intent: string; result: SubmissionResult<string[]>; done?: string } | undefined;

export function Shell({ practice, children }: { practice?: string; children: React.ReactNode }) {
  return (
    <div className="min-h-screen">
      <header className="border-b border-line bg-white">
        <div className="mx-auto flex max-w-4xl items-center gap-2 px-4 py-3 text-lg font-bold text-accent-800 sm:px-6">
          <img src="/favicon.svg" alt="" className="size-7" /> {practice ?? "Referral"}
        </div>
      </header>
      <main id="main" className="mx-auto max-w-4xl px-4 py-8 sm:px-6">
        {children}
      </main>
    </div>
  );
}

export function Done({ a, intent }: { a: ActionData; intent: string }) {
  if (a?.intent !== intent || !a.done) return null;
  return (
    <div className="mb-4">
      <Notice tone="success" title="Done">
        {a.done}
      </Notice>
    </div>
  );
}

export function useLast(id: string, a: ActionData) {
  const navigation = useNavigation();
  return navigation.state === "idle" && a?.intent === id ? a.result : null;
}

/**
 * The recipient's name: typed once, then carried into every later form through this link.
 * Once known it is shown as a line that opens to change it (the input is sent either way).
 */
export function NameField({
  errors,
  input,
  responder,
}: {
  errors: string[] | undefined;
  input: { id: string; name: string; type: string; defaultValue?: string };
  responder: string;
}) {
  // Keyed by the name so a form drawn before the name was known takes it up once it is.
  const field = (
    <Field
      key={responder}
      label="Your name"
      errors={errors}
      inputProps={{ ...input, defaultValue: input.defaultValue || responder, autoComplete: "name" }}
    />
  );
  if (!responder || errors?.length) return field;
  return (
    <details className="text-sm">
      <summary className="cursor-pointer py-1">
        Responding as <span className="font-semibold">{responder}</span> (change)
      </summary>
      <div className="mt-2">{field}</div>
    </details>
  );
}

/** What the recipient has already sent through this link. */
export function SentReplies({
  replies,
}: {
  replies: { id: string; authorName: string; createdAt: string; body: string; fileName: string | null }[];
}) {
  if (!replies.length) return null;
  return (
    <div className="mt-6">
      <h3 className="font-semibold">Sent so far</h3>
      <ul className="mt-2 space-y-2 text-sm">
        {replies.map((x) => (
          <li key={x.id} className="rounded-md border border-line p-3">
            <span className="text-muted">
              {x.authorName} · {x.createdAt}
            </span>
            {x.body ? <p className="mt-1 whitespace-pre-wrap">{x.body}</p> : null}
            {x.fileName ? <p className="mt-1">Attached: {x.fileName}</p> : null}
          </li>
        ))}
      </ul>
    </div>
  );
}
