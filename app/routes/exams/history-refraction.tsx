/** The exam's case history, refractions (with the change from last visit's final) and binocular vision. */
import { createColumnHelper } from "@tanstack/react-table";
import { useContext, useState } from "react";
import type { Route } from "./+types/exam";
import { DataTable } from "~/components/data-table";
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
import { ExamInput, ExamPageContext, ExamSelect, ExamTextarea, SectionForm } from "./exam-form";
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

/** The refraction grid's rows: one per eye, with the eye's name as the refusals say it. */
const EYE_ROWS = EYES.map((eye) => ({ eye, name: eye === "right" ? "Right" : "Left" }));
const eyeCol = createColumnHelper<(typeof EYE_ROWS)[number]>();

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
  const { timeZone } = useContext(ExamPageContext);
  const label = sectionTitle(`refraction:${kind}`);
  const short = label.split(" (")[0]!.toLowerCase();
  const v = (eye: EyeKey, p: string) => values[`${kind}.${eye}_${p}`];
  const [current, setCurrent] = useState<Record<EyeKey, SphCyl | null>>(() => ({
    right: parseRxText(v("right", "rx"), "").value,
    left: parseRxText(v("left", "rx"), "").value,
  }));
  /** A decimal field of each eye; the refusal names the eye and the field (`Right add`). */
  const number = (p: string, header: string, said: string, [min, max, step]: [number, number, number], width: string) =>
    eyeCol.display({
      id: p,
      header,
      meta: { className: width },
      cell: ({ row: { original: r } }) => (
        <ExamInput
          id={`${kind}-${r.eye}-${p}`}
          name={`${r.eye}_${p}`}
          label={`${r.name} ${short} ${said}`}
          hideLabel
          inputMode="decimal"
          defaultValue={v(r.eye, p)}
          validate={(t) => parseNumber(t, `${r.name} ${p}`, min, max, { step }).error}
        />
      ),
    });
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
          {formatDate(addendumNote.createdAt, { timeZone, time: true })}.
        </p>
      ) : null}
      <DataTable
        data={EYE_ROWS}
        getRowId={(r) => r.eye}
        caption={`${label}, right and left eye`}
        empty="No eyes to show."
        columns={[
          eyeCol.accessor("eye", {
            header: "Eye",
            meta: { rowHeader: true },
            cell: ({ row: { original: r } }) => EYE_LABEL[r.eye],
          }),
          eyeCol.display({
            id: "rx",
            header: "Sphere / cylinder × axis",
            meta: { className: "min-w-56" },
            cell: ({ row: { original: r } }) => (
              <ExamInput
                id={`${kind}-${r.eye}-rx`}
                name={`${r.eye}_rx`}
                label={`${r.name} ${short} sphere, cylinder and axis`}
                hideLabel
                defaultValue={v(r.eye, "rx")}
                validate={(t) => parseRxText(t, `${r.name} ${short}`).error}
                onValue={(t) => setCurrent((c) => ({ ...c, [r.eye]: parseRxText(t, "").value }))}
              />
            ),
          }),
          number("add", "Add", "add", [0.25, 4, 0.25], "w-24"),
          number("prism", "Prism (Δ)", "prism in prism dioptres", [0.25, 20, 0.25], "w-20"),
          eyeCol.display({
            id: "base",
            header: "Base",
            meta: { className: "w-24" },
            cell: ({ row: { original: r } }) => (
              <ExamSelect
                id={`${kind}-${r.eye}-base`}
                name={`${r.eye}_base`}
                label={`${r.name} ${short} prism base`}
                hideLabel
                defaultValue={v(r.eye, "base")}
                options={Object.fromEntries(PRISM_BASES.map((b) => [b, b]))}
              />
            ),
          }),
          number("vertex", "Vertex (mm)", "vertex distance in mm", [0, 25, 0.5], "w-20"),
          eyeCol.display({
            id: "va",
            header: "VA",
            meta: { className: "w-28" },
            cell: ({ row: { original: r } }) => (
              <ExamInput
                id={`${kind}-${r.eye}-va`}
                name={`${r.eye}_va`}
                label={`${r.name} ${short} VA`}
                hideLabel
                defaultValue={v(r.eye, "va")}
                validate={(t) => parseAcuity(t, `${r.name} VA`, { notation, distance: "distance" }).error}
                echo={(t) => parseAcuity(t, `${r.name} VA`, { notation, distance: "distance" }).value?.echo}
              />
            ),
          }),
          ...(previous
            ? [
                eyeCol.display({
                  id: "change",
                  header: "Change from last final",
                  meta: { className: "min-w-64" },
                  cell: ({ row: { original: r } }) => (
                    <ChangeCell before={previous.rows[r.eye]} now={current[r.eye]} eye={r.eye} />
                  ),
                }),
              ]
            : []),
        ]}
      />
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
