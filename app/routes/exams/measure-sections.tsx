/** Acuity (with its notation and what each value reads as), IOP (several readings, mean) and the assessment with per-eye diagnoses. */
import { dateTimeFormat } from "~/lib/format/intl";
import { createColumnHelper } from "@tanstack/react-table";
import { useMemo, useState } from "react";
import { DataTable } from "~/components/data-table";
import {
  ACUITY_CORRECTION_LABEL,
  ACUITY_CORRECTIONS,
  ACUITY_DISTANCES,
  ACUITY_EYES,
  acuityField,
  cctField,
  DIAGNOSES,
  diagnosisField,
  EYE_LABEL,
  EYES,
  IOP_METHODS,
  IOP_READINGS,
  iopField,
  meanIop,
  parseAcuity,
  parseNumber,
  type EyeKey,
} from "~/lib/exam/sections";
import { ACUITY_NOTATION_LABEL, ACUITY_NOTATIONS, type AcuityNotation, type ReferralPrompt } from "~/lib/optics";
import { ExamInput, ExamSelect, ExamTextarea, SectionForm } from "./exam-form";
import { sectionTitle } from "~/lib/exam/section-list";

type V = { values: Record<string, string>; readOnly: boolean };

const SIDE = { right: "Right", left: "Left", both: "Both eyes" } as const;

/** The acuity grid's rows: right, left and both eyes. */
const ACUITY_ROWS = ACUITY_EYES.map((eye) => ({ eye }));
const acuityCol = createColumnHelper<(typeof ACUITY_ROWS)[number]>();

export function AcuitySection({
  values,
  readOnly,
  prompts,
  practiceNotation,
}: V & { prompts: ReferralPrompt[]; practiceNotation: AcuityNotation }) {
  const [notation, setNotation] = useState<AcuityNotation>(() =>
    (ACUITY_NOTATIONS as readonly string[]).includes(values.va_notation ?? "")
      ? (values.va_notation as AcuityNotation)
      : practiceNotation,
  );
  const columns = ACUITY_DISTANCES.flatMap((d) =>
    ACUITY_CORRECTIONS.filter((c) => !(d === "near" && c === "pinhole")).map((c) => [d, c] as const),
  );
  const readers = useMemo(
    () =>
      Object.fromEntries(
        ACUITY_EYES.flatMap((eye) =>
          columns.map(([d, c]) => {
            const label = `${SIDE[eye]} ${d} ${ACUITY_CORRECTION_LABEL[c].toLowerCase()} VA`;
            return [
              acuityField(eye, d, c),
              {
                label,
                validate: (t: string) => parseAcuity(t, label, { notation, distance: d }).error,
                echo: (t: string) => parseAcuity(t, label, { notation, distance: d }).value?.echo,
              },
            ];
          }),
        ),
      ),
    // eslint-disable-next-line react-hooks/exhaustive-deps
    [notation],
  );
  return (
    <SectionForm
      section="acuity"
      title={sectionTitle("acuity")}
      readOnly={readOnly}
      prompts={prompts}
      description={
        <>
          Fractions say their own notation (6/9, 20/30). A bare number is read in the notation chosen here; with Snellen
          notations a bare number is refused because 1.0 means 6/6 as decimal but 6/60 as logMAR. Near in N-point (N5)
          or M units (0.8M) at 40 cm; pinhole as PH 6/9; low vision as CF, HM, LP or NLP. Each value shows what it reads
          as before it is saved.
        </>
      }
    >
      <div className="mb-3 max-w-sm">
        <ExamSelect
          id="va-notation"
          name="va_notation"
          label="Notation of bare numbers in this entry"
          defaultValue={notation}
          options={ACUITY_NOTATION_LABEL}
          onValue={(v) =>
            setNotation((ACUITY_NOTATIONS as readonly string[]).includes(v) ? (v as AcuityNotation) : practiceNotation)
          }
        />
      </div>
      <DataTable
        data={ACUITY_ROWS}
        getRowId={(r) => r.eye}
        caption="Visual acuity by eye, distance and correction"
        empty="No eyes to show."
        columns={[
          acuityCol.accessor("eye", {
            header: "Eye",
            meta: { rowHeader: true },
            cell: ({ row: { original: r } }) => EYE_LABEL[r.eye],
          }),
          ...columns.map(([d, c]) =>
            acuityCol.display({
              id: `${d}-${c}`,
              header: `${d === "distance" ? "Distance" : "Near"}, ${ACUITY_CORRECTION_LABEL[c].toLowerCase()}`,
              meta: { className: "min-w-28" },
              cell: ({ row: { original: r } }) => {
                const k = acuityField(r.eye, d, c);
                const reader = readers[k]!;
                return (
                  <ExamInput
                    id={`va-${r.eye}-${d}-${c}`}
                    name={k}
                    label={reader.label}
                    hideLabel
                    defaultValue={values[k]}
                    validate={reader.validate}
                    echo={reader.echo}
                    revalidateKey={notation}
                  />
                );
              },
            }),
          ),
        ]}
      />
    </SectionForm>
  );
}

/** The time of day now in the practice's time zone, as a time field wants it (HH:MM). */
const timeNow = (timeZone: string) =>
  dateTimeFormat("en-GB", { timeZone, hour: "2-digit", minute: "2-digit", hourCycle: "h23" }).format(new Date());

export function IopSection({
  values,
  readOnly,
  prompts,
  timeZone,
}: V & { prompts: ReferralPrompt[]; timeZone: string }) {
  const readings = Array.from({ length: IOP_READINGS }, (_, i) => i + 1);
  const saved = (eye: EyeKey) =>
    readings.flatMap((n) =>
      values[iopField(eye, "mmHg", n)] ? [{ mmHg: Number(values[iopField(eye, "mmHg", n)]) }] : [],
    );
  return (
    <SectionForm
      section="iop"
      title={sectionTitle("iop")}
      readOnly={readOnly}
      prompts={prompts}
      description="Up to four readings per eye. The first reading of an eye needs its method and time of day; the time is filled in with the time now when you type a pressure, and you can change it. A later reading without a method or time takes the one before it. The mean of the readings is what prompts and triage use."
    >
      <div className="grid gap-4 md:grid-cols-2">
        {EYES.map((eye) => {
          const E = eye === "right" ? "Right" : "Left";
          const list = saved(eye);
          const mean = meanIop(list);
          return (
            <fieldset key={eye} className="min-w-0 rounded-md border border-line p-3">
              <legend className="px-1 text-sm font-bold">{EYE_LABEL[eye]}</legend>
              <div className="space-y-2">
                {readings.map((n) => (
                  <div
                    key={n}
                    className="grid grid-cols-[minmax(5rem,1fr)_minmax(7rem,1.4fr)_minmax(6.5rem,1fr)] items-end gap-2"
                  >
                    <ExamInput
                      id={`iop-${eye}${n > 1 ? `-${n}` : ""}`}
                      name={iopField(eye, "mmHg", n)}
                      label={n === 1 ? `${E} IOP (mmHg)` : `${E} IOP reading ${n} (mmHg)`}
                      inputMode="decimal"
                      defaultValue={values[iopField(eye, "mmHg", n)]}
                      validate={(t) => parseNumber(t, `${E} IOP`, 1, 80).error}
                      onValue={(t) => {
                        if (n !== 1 || !t.trim()) return;
                        const time = document.getElementById(`iop-${eye}-time`) as HTMLInputElement | null;
                        if (time && !time.value) time.value = timeNow(timeZone);
                      }}
                    />
                    <ExamSelect
                      id={`iop-${eye}-method${n > 1 ? `-${n}` : ""}`}
                      name={iopField(eye, "method", n)}
                      label={n === 1 ? `${E} IOP method` : `${E} IOP method, reading ${n}`}
                      defaultValue={values[iopField(eye, "method", n)]}
                      options={IOP_METHODS}
                      required={n === 1}
                    />
                    <ExamInput
                      id={`iop-${eye}-time${n > 1 ? `-${n}` : ""}`}
                      name={iopField(eye, "time", n)}
                      label={n === 1 ? `${E} IOP time of day` : `${E} IOP time, reading ${n}`}
                      type="time"
                      defaultValue={values[iopField(eye, "time", n)]}
                      required={n === 1}
                    />
                  </div>
                ))}
                <ExamInput
                  id={`cct-${eye}`}
                  name={cctField(eye)}
                  label={`${E} central corneal thickness (µm), if measured`}
                  inputMode="numeric"
                  defaultValue={values[cctField(eye)]}
                  validate={(t) => parseNumber(t, `${E} corneal thickness`, 300, 800, { integer: true }).error}
                />
                <p className="text-sm" data-testid={`iop-mean-${eye}`}>
                  {mean === null ? (
                    <span className="text-muted">No reading saved.</span>
                  ) : (
                    <>
                      Saved: {list.length} {list.length === 1 ? "reading" : "readings"}, mean{" "}
                      <strong>{mean.toFixed(1)} mmHg</strong>
                    </>
                  )}
                </p>
              </div>
            </fieldset>
          );
        })}
      </div>
    </SectionForm>
  );
}

const DX_EYES = { right: "Right eye", left: "Left eye", both: "Both eyes" } as const;

export function AssessmentSection({ values, readOnly }: V) {
  const groups = [...new Set(DIAGNOSES.map((d) => d.group))];
  return (
    <SectionForm section="assessment" title={sectionTitle("assessment")} readOnly={readOnly}>
      <div className="grid gap-4 sm:grid-cols-2">
        <ExamTextarea
          id="as-assessment"
          name="assessment"
          label="Assessment"
          rows={3}
          defaultValue={values.assessment}
        />
        <ExamTextarea id="as-plan" name="plan" label="Plan" rows={3} defaultValue={values.plan} />
        <ExamInput
          id="as-recall"
          name="recallMonths"
          label="Recall in (months)"
          inputMode="numeric"
          defaultValue={values.recallMonths}
          validate={(t) => parseNumber(t, "Recall", 1, 60, { integer: true }).error}
        />
      </div>
      <fieldset className="mt-4 min-w-0">
        <legend className="mb-2 text-sm font-semibold">
          Diagnoses (ICD-10), each for the right eye, the left eye or both
        </legend>
        <div className="space-y-4">
          {groups.map((g) => (
            <div key={g}>
              <h3 className="mb-1 text-sm font-bold">{g}</h3>
              <div className="grid gap-x-4 gap-y-1 lg:grid-cols-2">
                {DIAGNOSES.filter((d) => d.group === g).map((d) => (
                  <div
                    key={d.code}
                    className="grid grid-cols-[1fr_8.5rem] items-center gap-2 border-b border-line py-1"
                  >
                    <span className="text-sm" id={`dx-${d.code}-label`}>
                      <span className="font-mono">{d.code}</span> {d.label}
                    </span>
                    <ExamSelect
                      id={`dx-${d.code}`}
                      name={diagnosisField(d.code)}
                      label={`${d.code} ${d.label}: eye`}
                      hideLabel
                      defaultValue={values[diagnosisField(d.code)]}
                      options={DX_EYES}
                      emptyLabel="Not diagnosed"
                    />
                  </div>
                ))}
              </div>
            </div>
          ))}
        </div>
        <p className="mt-2 text-xs text-muted">
          ICD-10 codes and titles from the WHO classification; check against the edition your practice reports in.
        </p>
      </fieldset>
    </SectionForm>
  );
}
