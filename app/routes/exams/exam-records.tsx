/** What follows the clinical sections: signing, addenda and the prescriptions issued from the exam. */
import { useState } from "react";
import { Form, useActionData, useNavigation } from "react-router";
import type { Route } from "./+types/exam";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Notice } from "~/components/ui/notice";
import { RX_CAUTIONS } from "~/lib/exam/sections";
import { formatRx } from "~/lib/optics";
import { formatDate } from "~/lib/format";
import { ExamInput } from "./exam-form";

type LoaderData = Route.ComponentProps["loaderData"];

export function SignCard({
  states,
  canSign,
  examiner,
}: {
  states: Record<string, string>;
  canSign: boolean;
  examiner: string;
}) {
  const navigation = useNavigation();
  const pending = Object.entries(states)
    .filter(([, s]) => s !== "saved")
    .map(([k]) => k);
  const actionData = useActionData<{ intent?: string; message?: string }>();
  return (
    <Card title="Sign the exam">
      <p className="mb-3 text-sm text-muted">
        A signed exam is locked. Later corrections are added as addenda that record who made them and when.
      </p>
      {actionData?.intent === "sign" && actionData.message ? <Notice tone="error" title={actionData.message} /> : null}
      {pending.length ? (
        <Notice tone="warning" title="Some sections are not saved yet">
          Wait for every section to show “Saved”, or correct the fields it names: {pending.join(", ")}.
        </Notice>
      ) : null}
      {!canSign ? (
        <Notice tone="info" title={`Only the examining clinician (${examiner}) signs this exam.`}>
          Once it is signed you can countersign it or add an addendum.
        </Notice>
      ) : (
        <Form method="post" className="mt-3">
          <input type="hidden" name="intent" value="sign" />
          <Button
            type="submit"
            disabled={pending.length > 0}
            pending={navigation.state === "submitting" && navigation.formData?.get("intent") === "sign"}
          >
            Sign exam
          </Button>
        </Form>
      )}
    </Card>
  );
}

export function Addenda({ addenda }: { addenda: LoaderData["addenda"] }) {
  const actionData = useActionData<{ intent?: string; message?: string; errors?: Record<string, string[]> }>();
  const errors = actionData?.intent === "addendum" ? (actionData.errors ?? {}) : {};
  return (
    <section id="addenda">
      <Card title="Addenda">
        {addenda.length ? (
          <ol className="mb-4 space-y-3">
            {addenda.map((a) => (
              <li key={a.id} className="rounded-md border border-line p-3">
                <p className="text-sm text-muted">
                  {a.section} · {a.author} ·{" "}
                  {new Date(a.createdAt).toLocaleString("en-GB", { dateStyle: "medium", timeStyle: "short" })}
                </p>
                <p className="mt-1 whitespace-pre-wrap">{a.body}</p>
              </li>
            ))}
          </ol>
        ) : (
          <p className="mb-4 text-muted">No addenda.</p>
        )}
        <Form method="post" className="grid gap-3 sm:grid-cols-[14rem_1fr_auto] sm:items-end">
          <input type="hidden" name="intent" value="addendum" />
          <div>
            <label htmlFor="ad-section" className="mb-1 block text-sm font-semibold">
              Part of the exam
            </label>
            <input
              id="ad-section"
              name="section"
              className="block w-full rounded-md border border-line px-3 py-2"
              aria-invalid={errors.section ? true : undefined}
              aria-describedby={errors.section ? "ad-section-error" : undefined}
            />
            {errors.section ? (
              <p id="ad-section-error" className="mt-1 text-sm font-semibold text-red-800">
                ✕ {errors.section[0]}
              </p>
            ) : null}
          </div>
          <div>
            <label htmlFor="ad-body" className="mb-1 block text-sm font-semibold">
              Correction
            </label>
            <textarea
              id="ad-body"
              name="body"
              rows={2}
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
          <Button type="submit">Add addendum</Button>
        </Form>
      </Card>
    </section>
  );
}

export function Prescriptions({ data: d }: { data: LoaderData }) {
  const [kind, setKind] = useState<"spectacle" | "contact_lens">("spectacle");
  const actionData = useActionData<{ intent?: string; message?: string; errors?: Record<string, string[]> }>();
  const errors = actionData?.intent === "issue-rx" ? (actionData.errors ?? {}) : {};
  return (
    <section id="prescriptions">
      <Card title="Prescriptions from this exam">
        {d.prescriptions.length ? (
          <ul className="mb-4 space-y-2">
            {d.prescriptions.map((p) => (
              <li
                key={p.id}
                className="flex flex-wrap items-center justify-between gap-2 rounded-md border border-line p-3"
              >
                <span>
                  <span className="font-semibold">{p.kind === "spectacle" ? "Spectacle" : "Contact lens"}</span> ·
                  issued {formatDate(p.issuedAt)} · expires {formatDate(p.expiresOn)} ·{" "}
                  {p.eyes.map((e) => `${e.eye === "right" ? "R" : "L"} ${formatRx(e)}`).join("; ")}
                </span>
                <a
                  href={`/patients/${d.patient.id}/prescriptions/${p.id}/pdf`}
                  className="font-semibold text-accent-800 underline"
                  download
                >
                  Download PDF
                </a>
              </li>
            ))}
          </ul>
        ) : null}
        {!d.hasFinal ? (
          <Notice tone="info" title="No final refraction">
            Record a final refraction to issue a prescription from this exam.
          </Notice>
        ) : (
          <Form method="post" className="space-y-3">
            <input type="hidden" name="intent" value="issue-rx" />
            {actionData?.intent === "issue-rx" && actionData.message ? (
              <Notice tone="error" title={actionData.message} />
            ) : null}
            <fieldset>
              <legend className="mb-1 text-sm font-semibold">Kind</legend>
              <div className="flex gap-4">
                <label className="flex items-center gap-2">
                  <input
                    type="radio"
                    name="kind"
                    value="spectacle"
                    checked={kind === "spectacle"}
                    onChange={() => setKind("spectacle")}
                  />{" "}
                  Spectacles
                </label>
                <label className="flex items-center gap-2">
                  <input
                    type="radio"
                    name="kind"
                    value="contact_lens"
                    checked={kind === "contact_lens"}
                    onChange={() => setKind("contact_lens")}
                  />{" "}
                  Contact lenses
                </label>
              </div>
            </fieldset>
            {kind === "contact_lens" ? (
              <div className="grid gap-3 sm:grid-cols-3">
                <ExamInput id="rx-lens" name="lensName" label="Lens (brand and type)" />
                <ExamInput id="rx-bc" name="baseCurveMm" label="Base curve (mm)" inputMode="decimal" />
                <ExamInput id="rx-dia" name="diameterMm" label="Diameter (mm)" inputMode="decimal" />
              </div>
            ) : null}
            {Object.values(errors).flat().length ? (
              <Notice tone="error" title="Check the fields">
                {Object.values(errors).flat().join(" ")}
              </Notice>
            ) : null}
            <ExamInput id="rx-notes" name="notes" label="Notes for the dispenser (optional)" />
            <ul className="list-disc pl-5 text-sm text-muted">
              {RX_CAUTIONS.map((c) => (
                <li key={c}>{c}</li>
              ))}
            </ul>
            <Button type="submit">Issue prescription</Button>
          </Form>
        )}
      </Card>
    </section>
  );
}
