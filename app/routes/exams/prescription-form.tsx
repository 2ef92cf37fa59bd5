/** The prescriptions issued from a signed exam, and the form that issues one (spectacles or the fitted contact lens). */
import { useState } from "react";
import { Form, Link, useActionData } from "react-router";
import type { Route } from "./+types/exam";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Notice } from "~/components/ui/notice";
import {
  checkBaseCurve,
  checkDiameter,
  checkLensPower,
  describePowers,
  isToric,
  lensLabel,
  REPLACEMENTS,
  vertexGuide,
} from "~/lib/contact-lens/catalogue";
import { parseNumber, parseRxText, rxCautions } from "~/lib/exam/sections";
import { formatDate } from "~/lib/format";
import { formatRx } from "~/lib/optics";
import { LENS_USES, STATEMENTS } from "~/lib/prescriptions/wording";
import { ErrorsContext, ExamCheckbox, ExamInput, ExamSelect } from "./exam-inputs";

type LoaderData = Route.ComponentProps["loaderData"];
const SIDE = { right: "Right", left: "Left" } as const;

export function Prescriptions({ data: d }: { data: LoaderData }) {
  const [kind, setKind] = useState<"spectacle" | "contact_lens">("spectacle");
  const actionData = useActionData<{ intent?: string; message?: string; errors?: Record<string, string[]> }>();
  const mine = actionData?.intent === "issue-rx" ? actionData : undefined;
  const errors = mine?.errors ?? {};
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
        <Form method="post" className="space-y-3" key={kind}>
          <input type="hidden" name="intent" value="issue-rx" />
          {mine?.message ? (
            <Notice tone="error" title={mine.message}>
              {Object.values(errors).flat().length ? (
                <ul className="list-disc pl-5" data-testid="rx-errors">
                  {Object.values(errors)
                    .flat()
                    .map((m) => (
                      <li key={m}>{m}</li>
                    ))}
                </ul>
              ) : null}
            </Notice>
          ) : null}
          <fieldset>
            <legend className="mb-1 text-sm font-semibold">Kind</legend>
            <div className="flex gap-4">
              {(
                [
                  ["spectacle", "Spectacles"],
                  ["contact_lens", "Contact lenses"],
                ] as const
              ).map(([k, label]) => (
                <label key={k} className="flex min-h-11 items-center gap-2">
                  <input type="radio" name="kind" value={k} checked={kind === k} onChange={() => setKind(k)} /> {label}
                </label>
              ))}
            </div>
          </fieldset>
          <ErrorsContext.Provider value={errors}>
            {kind === "spectacle" ? <SpectacleFields data={d} /> : <ContactLensFields data={d} />}
            <ExamInput id="rx-notes" name="notes" label="Notes for the dispenser (optional)" />
          </ErrorsContext.Provider>
          <ul className="list-disc pl-5 text-sm text-muted" data-testid="rx-cautions">
            {rxCautions(kind).map((c) => (
              <li key={c}>{c}</li>
            ))}
          </ul>
          <Button type="submit" disabled={kind === "spectacle" ? !d.hasFinal : !fittedEyes(d).length}>
            Issue prescription
          </Button>
        </Form>
      </Card>
    </section>
  );
}

const fittedEyes = (d: LoaderData) => (["right", "left"] as const).filter((e) => d.fitted?.eyes[e]?.lensId);

function SpectacleFields({ data: d }: { data: LoaderData }) {
  if (!d.hasFinal)
    return (
      <Notice tone="info" title="No final refraction">
        Record a final refraction to issue a spectacle prescription from this exam.
      </Notice>
    );
  return (
    <>
      <div className="grid gap-3 sm:grid-cols-3">
        <ExamSelect id="rx-use" name="lensUse" label="Lens use" options={LENS_USES} required emptyLabel="— choose —" />
        <ExamSelect id="rx-statement" name="statement" label="Statement" options={STATEMENTS} defaultValue="none" />
        <div className="self-end">
          <ExamCheckbox id="rx-referred" name="referred" label="The patient was referred at this exam" />
        </div>
      </div>
      <div className="grid gap-3 sm:grid-cols-3">
        {(["right", "left"] as const).flatMap((eye) => [
          <ExamInput
            key={`${eye}-int`}
            id={`rx-${eye}-int`}
            name={`${eye}_intAdd`}
            label={`${SIDE[eye]} intermediate add`}
            inputMode="decimal"
            validate={(t) => parseNumber(t, `${SIDE[eye]} intermediate add`, 0.25, 3, { step: 0.25 }).error}
          />,
          <ExamInput
            key={`${eye}-pd`}
            id={`rx-${eye}-pd`}
            name={`${eye}_pd`}
            label={`${SIDE[eye]} distance PD (mm)`}
            inputMode="decimal"
            validate={(t) => parseNumber(t, `${SIDE[eye]} distance PD`, 20, 45, { step: 0.5 }).error}
          />,
          <ExamInput
            key={`${eye}-pdn`}
            id={`rx-${eye}-pdn`}
            name={`${eye}_pdNear`}
            label={`${SIDE[eye]} near PD (mm)`}
            inputMode="decimal"
            validate={(t) => parseNumber(t, `${SIDE[eye]} near PD`, 18, 45, { step: 0.5 }).error}
          />,
        ])}
      </div>
    </>
  );
}

function ContactLensFields({ data: d }: { data: LoaderData }) {
  const eyes = fittedEyes(d);
  if (!eyes.length)
    return (
      <Notice tone="info" title="No lens fitted">
        A contact-lens prescription is issued only from a fitted lens: record the lens fitted (from the practice&apos;s
        catalogue) in the exam&apos;s contact-lens fitting section, or add it by a new exam.{" "}
        <Link to="/settings/contact-lenses" className="underline">
          The catalogue
        </Link>{" "}
        is kept by the owner.
      </Notice>
    );
  return (
    <div className="grid gap-4 lg:grid-cols-2">
      {eyes.map((eye) => {
        const fitted = d.fitted!.eyes[eye]!;
        const lens = d.lenses.find((l) => l.id === fitted.lensId);
        if (!lens) return null;
        const E = SIDE[eye];
        const spectacle = parseRxText(d.values[`final.${eye}_rx`], "").value;
        let guide: string | null = null;
        try {
          guide = spectacle ? vertexGuide(spectacle, Number(d.values[`final.${eye}_vertex`] ?? "") || 12).text : null;
        } catch {
          guide = null;
        }
        return (
          <fieldset key={eye} className="rounded-md border border-line p-3">
            <legend className="px-1 font-bold">
              {E} eye: {lensLabel(lens)}
              {isToric(lens) ? " (toric)" : ""}
            </legend>
            <input type="hidden" name={`${eye}_lens`} value={lens.id} />
            <p className="mb-2 text-sm text-muted">
              {lens.material} · {REPLACEMENTS[lens.replacement]} · {describePowers(lens)}
            </p>
            <div className="grid gap-3 sm:grid-cols-3">
              <ExamInput
                id={`rx-${eye}-bc`}
                name={`${eye}_bc`}
                label={`${E} base curve (mm)`}
                required
                inputMode="decimal"
                defaultValue={fitted.baseCurveMm?.toFixed(2) ?? ""}
                validate={(t) => {
                  const r = parseNumber(t, `${E} base curve (mm)`, 5, 11, { step: 0.01 });
                  return r.error ?? (r.value !== null ? checkBaseCurve(lens, r.value, `${E} base curve`) : undefined);
                }}
              />
              <ExamInput
                id={`rx-${eye}-dia`}
                name={`${eye}_dia`}
                label={`${E} diameter (mm)`}
                required
                inputMode="decimal"
                defaultValue={fitted.diameterMm?.toFixed(1) ?? ""}
                validate={(t) => {
                  const r = parseNumber(t, `${E} diameter (mm)`, 7, 25, { step: 0.1 });
                  return r.error ?? (r.value !== null ? checkDiameter(lens, r.value, `${E} diameter`) : undefined);
                }}
              />
              <ExamInput
                id={`rx-${eye}-power`}
                name={`${eye}_power`}
                label={`${E} power`}
                required
                defaultValue={fitted.power ? formatRx(fitted.power) : ""}
                validate={(t) => {
                  const r = parseRxText(t, `${E} power`);
                  if (r.error) return r.error;
                  return r.value ? checkLensPower(lens, r.value, `${E} power`).join(" ") || undefined : undefined;
                }}
              />
            </div>
            {guide ? (
              <p className="mt-2 text-sm" data-testid={`rx-${eye}-guide`}>
                Guide only, not for ordering: {guide}, by F<sub>c</sub> = F<sub>s</sub> / (1 − d·F<sub>s</sub>).
              </p>
            ) : null}
          </fieldset>
        );
      })}
    </div>
  );
}
