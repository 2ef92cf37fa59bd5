/** Who signed the exam, countersignatures by other clinicians, and the form to add one. */
import { useContext } from "react";
import { Form, useActionData, useNavigation } from "react-router";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Notice } from "~/components/ui/notice";
import { formatDate } from "~/lib/format";
import { ExamPageContext } from "./exam-form";

export type Countersignature = { clinician: string; note: string; signedAt: string };

export function Signatures({
  signedBy,
  signedAt,
  countersignatures,
  canCountersign,
}: {
  signedBy: string | null;
  signedAt: string | null;
  countersignatures: Countersignature[];
  canCountersign: boolean;
}) {
  const actionData = useActionData<{ intent?: string; message?: string; errors?: Record<string, string[]> }>();
  const navigation = useNavigation();
  const { timeZone } = useContext(ExamPageContext);
  const when = (iso: string) => formatDate(iso, { timeZone, time: true });
  const mine = actionData?.intent === "countersign" ? actionData : undefined;
  return (
    <section id="signatures" aria-labelledby="signatures-title">
      <Card title={<span id="signatures-title">Signatures</span>}>
        <ul className="space-y-2 text-sm" data-testid="signatures">
          <li>
            <span className="font-semibold">Signed by the examining clinician:</span> {signedBy ?? "—"}
            {signedAt ? `, ${when(signedAt)}` : ""}
          </li>
          {countersignatures.map((c) => (
            <li key={c.clinician + c.signedAt}>
              <span className="font-semibold">Countersigned by {c.clinician}</span>, {when(c.signedAt)}
              {c.note ? <span className="block whitespace-pre-wrap text-muted">“{c.note}”</span> : null}
            </li>
          ))}
        </ul>
        {canCountersign ? (
          <Form method="post" className="mt-4 grid gap-3 sm:grid-cols-[1fr_auto] sm:items-end">
            <input type="hidden" name="intent" value="countersign" />
            {mine?.message ? (
              <div className="sm:col-span-2">
                <Notice tone="error" title={mine.message} />
              </div>
            ) : null}
            <div>
              <label htmlFor="cs-note" className="mb-1 block text-sm font-semibold">
                Countersignature note (optional)
              </label>
              <textarea
                id="cs-note"
                name="note"
                rows={2}
                maxLength={2000}
                className="block w-full rounded-md border border-line px-3 py-2"
              />
            </div>
            <Button
              type="submit"
              pending={navigation.state === "submitting" && navigation.formData?.get("intent") === "countersign"}
            >
              Countersign exam
            </Button>
          </Form>
        ) : null}
      </Card>
    </section>
  );
}
