/** The exam's case history, refractions (with the change from last visit's final) and binocular vision. */
import { useState } from "react";
import type { Route } from "./+types/exam";
import { Card } from "~/components/ui/card";
import { StatusBadge } from "~/components/ui/notice";
import {
  EYE_LABEL,
  EYES,
  parseAcuity,
  parseNumber,
  parseRxText,
  PRISM_BASES,
  type EyeKey,
  type RefractionKind,
} from "~/lib/exam/sections";
import {
  type AcuityNotation,
  compareRx,
  formatRx,
  isMeaningfulChange,
  MEANINGFUL_CHANGE_RULE,
  type SphCyl,
} from "~/lib/optics";
import { formatDate } from "~/lib/format";
import { ExamInput, ExamSelect, ExamTextarea, SectionForm } from "./exam-form";
import { sectionTitle } from "~/lib/exam/section-list";
import { CopySubjective } from "./copy-subjective";

type LoaderData = Route.ComponentProps["loaderData"];

type V = { values: Record<string, string>; readOnly: boolean };

export function HistorySection({ values, readOnly }: V) {
  const f = [
    ["reason", "Reason for visit"],
    ["symptoms", "Symptoms"],
    ["ocularHistory", "Ocular history"],
    ["generalHistory", "General health"],
    ["medications", "Medications"],
    ["familyHistory", "Family history"],
  ] as const;
  return (
    <SectionForm section="history" title={sectionTitle("history")} readOnly={readOnly}>
      <div className="grid gap-4 sm:grid-cols-2">
        {f.map(([k, label]) => (
          <ExamTextarea key={k} id={`h-${k}`} name={k} label={label} defaultValue={values[k]} />
        ))}
      </div>
    </SectionForm>
  );
}

type Previous = LoaderData["previous"];

export function PreviousFinal({ previous }: { previous: Previous }) {
  return (
    <Card title="Last visit's final refraction">
      {previous ? (
        <dl className="grid gap-2 sm:grid-cols-3">
          <div>
            <dt className="text-sm text-muted">Exam of</dt>
            <dd className="font-semibold">{formatDate(previous.examinedAt)}</dd>
          </div>
          {EYES.map((eye) => (
            <div key={eye}>
              <dt className="text-sm text-muted">{EYE_LABEL[eye]}</dt>
              <dd className="font-mono font-semibold" data-testid={`previous-final-${eye}`}>
                {previous.rows[eye]
                  ? `${formatRx(previous.rows[eye]!)}${previous.rows[eye]!.addPower ? ` add +${previous.rows[eye]!.addPower!.toFixed(2)}` : ""}${previous.rows[eye]!.va ? ` · VA ${previous.rows[eye]!.va}` : ""}`
                  : "—"}
              </dd>
            </div>
          ))}
        </dl>
      ) : (
        <p className="text-muted">No earlier exam of this patient has a final refraction.</p>
      )}
    </Card>
  );
}

function ChangeCell({ before, now, eye }: { before?: SphCyl; now: SphCyl | null; eye: EyeKey }) {
  if (!before) return <span className="text-muted">No earlier final</span>;
  if (!now) return <span className="text-muted">—</span>;
  const c = compareRx(before, now);
  const meaningful = isMeaningfulChange(c);
  const f = (x: number) => `${x > 0 ? "+" : x < 0 ? "−" : ""}${Math.abs(x).toFixed(2)}`;
  return (
    <div data-testid={`change-${eye}`} className="text-xs">
      <p className="font-mono">
        ΔM {f(c.delta.M)} · ΔJ0 {f(c.delta.J0)} · ΔJ45 {f(c.delta.J45)} D
      </p>
      <p className="mt-1">
        {meaningful ? (
          <StatusBadge tone="warning">Meaningful change: {c.magnitude.toFixed(2)} D</StatusBadge>
        ) : (
          <StatusBadge tone="success">Within {c.magnitude.toFixed(2)} D (under 0.50 D)</StatusBadge>
        )}
      </p>
    </div>
  );
}

export function RefractionSection({
  kind,
  values,
  readOnly,
  previous,
  notation,
  addendumNote = null,
}: V & {
  kind: RefractionKind;
  previous: Previous | null;
  notation: AcuityNotation;
  /** Who supplied this refraction by addendum after signing, and when. */
  addendumNote?: { author: string; createdAt: string } | null;
}) {
  const label = sectionTitle(`refraction:${kind}`);
  const short = label.split(" (")[0]!.toLowerCase();
  const v = (eye: EyeKey, p: string) => values[`${kind}.${eye}_${p}`];
  const [current, setCurrent] = useState<Record<EyeKey, SphCyl | null>>(() => ({
    right: parseRxText(v("right", "rx"), "").value,
    left: parseRxText(v("left", "rx"), "").value,
  }));
  const eyeName = (eye: EyeKey) => (eye === "right" ? "Right" : "Left");
  return (
    <SectionForm
      section={`refraction:${kind}`}
      title={label}
      readOnly={readOnly}
      description={
        previous ? (
          <details>
            <summary className="cursor-pointer font-semibold">
              Change from the last final refraction, in power-vector terms (rule and source)
            </summary>
            <p className="mt-1">
              {MEANINGFUL_CHANGE_RULE} Power vectors: Thibos LN, Wheeler W, Horner D. Power vectors: an application of
              Fourier analysis to the description and statistical analysis of refractive error. Optom Vis Sci
              1997;74:367–375. Check before prescribing.
            </p>
          </details>
        ) : undefined
      }
    >
      {kind === "final" && !readOnly ? <CopySubjective /> : null}
      {addendumNote ? (
        <p className="mb-3 text-sm" data-testid="final-from-addendum">
          Given after signing, by addendum of {addendumNote.author} on{" "}
          {new Date(addendumNote.createdAt).toLocaleString("en-GB", { dateStyle: "medium", timeStyle: "short" })}.
        </p>
      ) : null}
      <div className="overflow-x-auto">
        <table className="min-w-full text-sm">
          <caption className="sr-only">{label}, right and left eye</caption>
          <thead>
            <tr className="text-left">
              <th scope="col" className="p-2">
                Eye
              </th>
              <th scope="col" className="p-2">
                Sphere / cylinder × axis
              </th>
              <th scope="col" className="p-2">
                Add
              </th>
              <th scope="col" className="p-2">
                Prism (Δ)
              </th>
              <th scope="col" className="p-2">
                Base
              </th>
              <th scope="col" className="p-2">
                Vertex (mm)
              </th>
              <th scope="col" className="p-2">
                VA
              </th>
              {previous ? (
                <th scope="col" className="p-2">
                  Change from last final
                </th>
              ) : null}
            </tr>
          </thead>
          <tbody>
            {EYES.map((eye) => {
              const E = eyeName(eye);
              return (
                <tr key={eye} className="border-t border-line align-top">
                  <th scope="row" className="p-2 text-left">
                    {EYE_LABEL[eye]}
                  </th>
                  <td className="min-w-56 p-1">
                    <ExamInput
                      id={`${kind}-${eye}-rx`}
                      name={`${eye}_rx`}
                      label={`${E} ${short} sphere, cylinder and axis`}
                      hideLabel
                      defaultValue={v(eye, "rx")}
                      validate={(t) => parseRxText(t, `${E} ${short}`).error}
                      onValue={(t) => setCurrent((c) => ({ ...c, [eye]: parseRxText(t, "").value }))}
                    />
                  </td>
                  <td className="w-24 p-1">
                    <ExamInput
                      id={`${kind}-${eye}-add`}
                      name={`${eye}_add`}
                      label={`${E} ${short} add`}
                      hideLabel
                      inputMode="decimal"
                      defaultValue={v(eye, "add")}
                      validate={(t) => parseNumber(t, `${E} add`, 0.25, 4, { step: 0.25 }).error}
                    />
                  </td>
                  <td className="w-20 p-1">
                    <ExamInput
                      id={`${kind}-${eye}-prism`}
                      name={`${eye}_prism`}
                      label={`${E} ${short} prism in prism dioptres`}
                      hideLabel
                      inputMode="decimal"
                      defaultValue={v(eye, "prism")}
                      validate={(t) => parseNumber(t, `${E} prism`, 0.25, 20, { step: 0.25 }).error}
                    />
                  </td>
                  <td className="w-24 p-1">
                    <ExamSelect
                      id={`${kind}-${eye}-base`}
                      name={`${eye}_base`}
                      label={`${E} ${short} prism base`}
                      hideLabel
                      defaultValue={v(eye, "base")}
                      options={Object.fromEntries(PRISM_BASES.map((b) => [b, b]))}
                    />
                  </td>
                  <td className="w-20 p-1">
                    <ExamInput
                      id={`${kind}-${eye}-vertex`}
                      name={`${eye}_vertex`}
                      label={`${E} ${short} vertex distance in mm`}
                      hideLabel
                      inputMode="decimal"
                      defaultValue={v(eye, "vertex")}
                      validate={(t) => parseNumber(t, `${E} vertex`, 0, 25, { step: 0.5 }).error}
                    />
                  </td>
                  <td className="w-28 p-1">
                    <ExamInput
                      id={`${kind}-${eye}-va`}
                      name={`${eye}_va`}
                      label={`${E} ${short} VA`}
                      hideLabel
                      defaultValue={v(eye, "va")}
                      validate={(t) => parseAcuity(t, `${E} VA`, { notation, distance: "distance" }).error}
                      echo={(t) => parseAcuity(t, `${E} VA`, { notation, distance: "distance" }).value?.echo}
                    />
                  </td>
                  {previous ? (
                    <td className="min-w-64 p-2">
                      <ChangeCell before={previous.rows[eye]} now={current[eye]} eye={eye} />
                    </td>
                  ) : null}
                </tr>
              );
            })}
          </tbody>
        </table>
      </div>
    </SectionForm>
  );
}

export function BinocularSection({ values, readOnly }: V) {
  return (
    <SectionForm section="binocular" title={sectionTitle("binocular")} readOnly={readOnly}>
      <div className="grid gap-4 sm:grid-cols-3">
        <ExamInput
          id="bv-ctd"
          name="bv_coverTestDistance"
          label="Cover test, distance"
          defaultValue={values.bv_coverTestDistance}
        />
        <ExamInput
          id="bv-ctn"
          name="bv_coverTestNear"
          label="Cover test, near"
          defaultValue={values.bv_coverTestNear}
        />
        <ExamInput
          id="bv-npc"
          name="bv_npcCm"
          label="Near point of convergence (cm)"
          inputMode="decimal"
          defaultValue={values.bv_npcCm}
          validate={(t) => parseNumber(t, "Near point of convergence (cm)", 0, 100).error}
        />
        <ExamInput id="bv-stt" name="bv_stereoTest" label="Stereo test used" defaultValue={values.bv_stereoTest} />
        <ExamInput
          id="bv-sts"
          name="bv_stereoArcSec"
          label="Stereo acuity (seconds of arc)"
          inputMode="numeric"
          defaultValue={values.bv_stereoArcSec}
          validate={(t) => parseNumber(t, "Stereo acuity", 1, 10000, { integer: true }).error}
        />
        <ExamInput id="bv-notes" name="bv_notes" label="Notes" defaultValue={values.bv_notes} />
      </div>
    </SectionForm>
  );
}
