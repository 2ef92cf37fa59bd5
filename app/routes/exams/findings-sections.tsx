/** Exam sections for the findings referral triage reads: red flags, pupils, anterior chamber, optic disc, fundus and dilation. */
import type { ReactNode } from "react";
import {
  AC_CELLS,
  acField,
  DILATING_DRUGS,
  DILATION_ROWS,
  dilationField,
  DISC_MARGINS,
  discField,
  EYE_LABEL,
  EYES,
  FUNDUS_FINDINGS,
  fundusField,
  parseNumber,
  pupilField,
  RED_FLAG_EYES,
  RED_FLAGS,
  redFlagField,
  type EyeKey,
  type FundusKey,
  type RedFlagKey,
} from "~/lib/exam/sections";
import { ExamCheckbox, ExamInput, ExamSelect, ExamTextarea, SectionForm } from "./exam-form";
import { sectionTitle } from "~/lib/exam/section-list";

type V = { values: Record<string, string>; readOnly: boolean };
const on = (values: Record<string, string>, k: string) => values[k] === "on";

function PerEye({ children }: { children: (eye: EyeKey, E: string) => ReactNode }) {
  return (
    <div className="grid gap-4 md:grid-cols-2">
      {EYES.map((eye) => (
        <fieldset key={eye} className="min-w-0 rounded-md border border-line p-3">
          <legend className="px-1 text-sm font-bold">{EYE_LABEL[eye]}</legend>
          <div className="grid gap-3 sm:grid-cols-2">{children(eye, eye === "right" ? "Right" : "Left")}</div>
        </fieldset>
      ))}
    </div>
  );
}

export function RedFlagsSection({ values, readOnly }: V) {
  return (
    <SectionForm
      section="redflags"
      title={sectionTitle("redflags")}
      readOnly={readOnly}
      description="Ask about each at every visit. Choose the eye affected; leave “Not reported” when the patient denies it. Referral triage reads these."
    >
      <div className="grid gap-3 sm:grid-cols-2 lg:grid-cols-3">
        {(Object.keys(RED_FLAGS) as RedFlagKey[]).map((k) => (
          <ExamSelect
            key={k}
            id={`rf-${k}`}
            name={redFlagField(k)}
            label={RED_FLAGS[k]}
            defaultValue={values[redFlagField(k)]}
            options={RED_FLAG_EYES}
            emptyLabel="Not reported"
          />
        ))}
      </div>
      <div className="mt-4 grid gap-3 sm:grid-cols-2">
        <ExamCheckbox
          id="rf-diplopia"
          name="rf_newDiplopia"
          label="New double vision"
          defaultChecked={on(values, "rf_newDiplopia")}
        />
        <ExamCheckbox
          id="rf-gca"
          name="rf_gcaSymptoms"
          label="New headache with features of giant-cell arteritis (scalp tenderness, jaw pain on chewing, visual disturbance, feeling unwell; usually over 50)"
          defaultChecked={on(values, "rf_gcaSymptoms")}
        />
        <ExamCheckbox
          id="rf-headache"
          name="rf_headache"
          label="Headache (note in the details whether it is worse on waking, on coughing or bending, or comes with nausea or vomiting)"
          defaultChecked={on(values, "rf_headache")}
        />
      </div>
      <div className="mt-3">
        <ExamTextarea
          id="rf-notes"
          name="rf_notes"
          label="Onset, duration and details"
          defaultValue={values.rf_notes}
        />
      </div>
    </SectionForm>
  );
}

export function PupilsSection({ values, readOnly }: V) {
  return (
    <SectionForm
      section="pupils"
      title={sectionTitle("pupils")}
      readOnly={readOnly}
      description="A relative afferent pupillary defect (swinging-flashlight test) is recorded in the eye that has it."
    >
      <PerEye>
        {(eye, E) => (
          <>
            <ExamCheckbox
              id={`pup-${eye}-equal`}
              name={pupilField(eye, "equal")}
              label={`${E}: equal, round, reacting to light and near`}
              defaultChecked={on(values, pupilField(eye, "equal"))}
            />
            <ExamCheckbox
              id={`pup-${eye}-rapd`}
              name={pupilField(eye, "rapd")}
              label={`${E}: relative afferent pupillary defect (RAPD)`}
              defaultChecked={on(values, pupilField(eye, "rapd"))}
            />
            <ExamCheckbox
              id={`pup-${eye}-larger`}
              name={pupilField(eye, "larger")}
              label={`${E}: the larger pupil (anisocoria)`}
              defaultChecked={on(values, pupilField(eye, "larger"))}
            />
            <ExamInput
              id={`pup-${eye}-size`}
              name={pupilField(eye, "size")}
              label={`${E} pupil size (mm)`}
              inputMode="decimal"
              defaultValue={values[pupilField(eye, "size")]}
              validate={(t) => parseNumber(t, `${E} pupil size`, 1, 10, { step: 0.5 }).error}
            />
            <ExamInput
              id={`pup-${eye}-notes`}
              name={pupilField(eye, "notes")}
              label={`${E} pupil notes`}
              className="sm:col-span-2"
              defaultValue={values[pupilField(eye, "notes")]}
            />
          </>
        )}
      </PerEye>
    </SectionForm>
  );
}

export function AnteriorChamberSection({ values, readOnly }: V) {
  return (
    <SectionForm
      section="ac"
      title={sectionTitle("ac")}
      readOnly={readOnly}
      description="Van Herick grade 0 (closed) to 4 (peripheral depth at least the corneal thickness); cells graded as seen with the slit lamp."
    >
      <PerEye>
        {(eye, E) => (
          <>
            <ExamInput
              id={`ac-${eye}-vh`}
              name={acField(eye, "vh")}
              label={`${E} van Herick grade (0–4)`}
              inputMode="numeric"
              defaultValue={values[acField(eye, "vh")]}
              validate={(t) => parseNumber(t, `${E} van Herick grade`, 0, 4, { integer: true }).error}
            />
            <ExamSelect
              id={`ac-${eye}-cells`}
              name={acField(eye, "cells")}
              label={`${E} cells`}
              defaultValue={values[acField(eye, "cells")]}
              options={AC_CELLS}
            />
            <ExamCheckbox
              id={`ac-${eye}-hyphaema`}
              name={acField(eye, "hyphaema")}
              label={`${E}: hyphaema`}
              defaultChecked={on(values, acField(eye, "hyphaema"))}
            />
            <ExamCheckbox
              id={`ac-${eye}-hypopyon`}
              name={acField(eye, "hypopyon")}
              label={`${E}: hypopyon`}
              defaultChecked={on(values, acField(eye, "hypopyon"))}
            />
            <ExamInput
              id={`ac-${eye}-notes`}
              name={acField(eye, "notes")}
              label={`${E} anterior chamber notes`}
              className="sm:col-span-2"
              defaultValue={values[acField(eye, "notes")]}
            />
          </>
        )}
      </PerEye>
    </SectionForm>
  );
}

export function DiscSection({ values, readOnly }: V) {
  return (
    <SectionForm
      section="disc"
      title={sectionTitle("disc")}
      readOnly={readOnly}
      description="Vertical cup/disc ratio as a number from 0 to 1 (for example 0.45)."
    >
      <PerEye>
        {(eye, E) => (
          <>
            <ExamInput
              id={`disc-${eye}-cd`}
              name={discField(eye, "cd")}
              label={`${E} vertical cup/disc ratio`}
              inputMode="decimal"
              defaultValue={values[discField(eye, "cd")]}
              validate={(t) => parseNumber(t, `${E} vertical cup/disc ratio`, 0, 1, { step: 0.01 }).error}
            />
            <ExamSelect
              id={`disc-${eye}-margins`}
              name={discField(eye, "margins")}
              label={`${E} disc margins`}
              defaultValue={values[discField(eye, "margins")]}
              options={DISC_MARGINS}
            />
            <ExamCheckbox
              id={`disc-${eye}-swelling`}
              name={discField(eye, "swelling")}
              label={`${E}: disc swelling`}
              defaultChecked={on(values, discField(eye, "swelling"))}
            />
            <ExamCheckbox
              id={`disc-${eye}-haem`}
              name={discField(eye, "haem")}
              label={`${E}: disc haemorrhage`}
              defaultChecked={on(values, discField(eye, "haem"))}
            />
            <ExamCheckbox
              id={`disc-${eye}-pallor`}
              name={discField(eye, "pallor")}
              label={`${E}: pallor`}
              defaultChecked={on(values, discField(eye, "pallor"))}
            />
            <ExamInput
              id={`disc-${eye}-notes`}
              name={discField(eye, "notes")}
              label={`${E} disc notes`}
              className="sm:col-span-2"
              defaultValue={values[discField(eye, "notes")]}
            />
          </>
        )}
      </PerEye>
    </SectionForm>
  );
}

export function FundusSection({ values, readOnly }: V) {
  return (
    <SectionForm
      section="fundus"
      title={sectionTitle("fundus")}
      readOnly={readOnly}
      description="Tick what was seen. Note whether the view was through a dilated pupil under Dilation."
    >
      <PerEye>
        {(eye, E) => (
          <>
            <div className="grid gap-2 sm:col-span-2">
              {(Object.keys(FUNDUS_FINDINGS) as FundusKey[]).map((k) => (
                <ExamCheckbox
                  key={k}
                  id={`fu-${eye}-${k}`}
                  name={fundusField(eye, k)}
                  label={`${E}: ${FUNDUS_FINDINGS[k].charAt(0).toLowerCase()}${FUNDUS_FINDINGS[k].slice(1)}`}
                  defaultChecked={on(values, fundusField(eye, k))}
                />
              ))}
            </div>
            <ExamInput
              id={`fu-${eye}-macula`}
              name={fundusField(eye, "macula")}
              label={`${E} macula`}
              defaultValue={values[fundusField(eye, "macula")]}
            />
            <ExamInput
              id={`fu-${eye}-periphery`}
              name={fundusField(eye, "periphery")}
              label={`${E} periphery`}
              defaultValue={values[fundusField(eye, "periphery")]}
            />
          </>
        )}
      </PerEye>
    </SectionForm>
  );
}

export function DilationSection({ values, readOnly, nowLocal }: V & { nowLocal: string }) {
  const rows = Array.from({ length: DILATION_ROWS }, (_, i) => i + 1);
  return (
    <SectionForm
      section="dilation"
      title={sectionTitle("dilation")}
      readOnly={readOnly}
      description="Each drop instilled: drug, strength, eye and the date and time (practice time). Check for angle-closure risk before dilating."
    >
      <div className="space-y-3">
        {rows.map((n) => (
          <fieldset
            key={n}
            className="grid min-w-0 gap-3 rounded-md border border-line p-3 sm:grid-cols-3 lg:grid-cols-6"
          >
            <legend className="px-1 text-sm font-bold">Drops {n}</legend>
            <ExamSelect
              id={`dil-${n}-drug`}
              name={dilationField(n, "drug")}
              label="Drug"
              defaultValue={values[dilationField(n, "drug")]}
              options={DILATING_DRUGS}
            />
            <ExamInput
              id={`dil-${n}-other`}
              name={dilationField(n, "other")}
              label="Other drug's name"
              defaultValue={values[dilationField(n, "other")]}
            />
            <ExamInput
              id={`dil-${n}-strength`}
              name={dilationField(n, "strength")}
              label="Strength (%)"
              inputMode="decimal"
              defaultValue={values[dilationField(n, "strength")]}
              validate={(t) => parseNumber(t, "Strength (%)", 0.1, 10).error}
            />
            <ExamSelect
              id={`dil-${n}-eye`}
              name={dilationField(n, "eye")}
              label="Eye"
              defaultValue={values[dilationField(n, "eye")]}
              options={RED_FLAG_EYES}
            />
            <ExamInput
              id={`dil-${n}-at`}
              name={dilationField(n, "at")}
              label="Date and time"
              type="datetime-local"
              max={nowLocal}
              defaultValue={values[dilationField(n, "at")]}
            />
            <ExamInput
              id={`dil-${n}-batch`}
              name={dilationField(n, "batch")}
              label="Batch (optional)"
              defaultValue={values[dilationField(n, "batch")]}
            />
          </fieldset>
        ))}
      </div>
    </SectionForm>
  );
}
