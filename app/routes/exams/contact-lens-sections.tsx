/** The exam's contact-lens sections: fitting (the lens a prescription is issued from) and aftercare. */
import { useState } from "react";
import {
  checkBaseCurve,
  checkDiameter,
  checkLensPower,
  describePowers,
  isToric,
  REPLACEMENTS,
  vertexGuide,
  type CatalogueLens,
} from "~/lib/contact-lens/catalogue";
import {
  CARE_SYSTEMS,
  CENTRATION,
  clField,
  COVERAGE,
  GRADES,
  GRADING_SCALE,
  MOVEMENT,
  ROTATION,
  type ClEyePart,
  type ClSectionId,
  type GradeKey,
} from "~/lib/contact-lens/sections";
import { sectionTitle } from "~/lib/exam/section-list";
import { parseAcuity, parseNumber, parseRxText } from "~/lib/exam/sections";
import type { AcuityNotation } from "~/lib/optics";
import { SectionForm } from "./exam-form";
import { ExamInput, ExamSelect, ExamTextarea } from "./exam-inputs";

type Lens = CatalogueLens & { active: boolean };
const SIDE = { right: "Right", left: "Left" } as const;

export function ContactLensSection({
  section,
  values,
  readOnly,
  lenses,
  notation,
}: {
  section: ClSectionId;
  values: Record<string, string>;
  readOnly: boolean;
  lenses: Lens[];
  notation: AcuityNotation;
}) {
  const fitting = section === "cl_fitting";
  const v = (k: string) => values[`${section}.${k}`];
  return (
    <SectionForm
      section={section}
      title={sectionTitle(section)}
      readOnly={readOnly}
      description={
        fitting
          ? "The lens fitted to each eye, from the practice's catalogue: a contact-lens prescription is issued only from this fitting, in the powers the lens is made in."
          : "The lens the patient wears now, how it is worn and how the eye looks with it."
      }
    >
      {fitting ? <VertexGuide values={values} /> : null}
      <div className="grid gap-6 lg:grid-cols-2">
        {(["right", "left"] as const).map((eye) => (
          <EyeFields
            key={eye}
            section={section}
            eye={eye}
            v={(p) => v(clField(eye, p))}
            lenses={lenses}
            notation={notation}
            fitting={fitting}
          />
        ))}
      </div>
      <div className="mt-4 grid gap-4 sm:grid-cols-3">
        <ExamInput
          id={`${section}-wearHours`}
          name="wearHours"
          label="Usual wearing time (hours a day)"
          inputMode="decimal"
          defaultValue={v("wearHours")}
          validate={(t) => parseNumber(t, "Usual wearing time", 0, 24, { step: 0.5 }).error}
        />
        <ExamInput
          id={`${section}-wearDays`}
          name="wearDays"
          label="Days a week worn"
          inputMode="numeric"
          defaultValue={v("wearDays")}
          validate={(t) => parseNumber(t, "Days a week", 0, 7, { integer: true }).error}
        />
        <ExamInput
          id={`${section}-wornToday`}
          name="wornToday"
          label="Hours worn today"
          inputMode="decimal"
          defaultValue={v("wornToday")}
          validate={(t) => parseNumber(t, "Hours worn today", 0, 24, { step: 0.5 }).error}
        />
        <ExamSelect
          id={`${section}-care`}
          name="care"
          label="Care system"
          options={CARE_SYSTEMS}
          defaultValue={v("care")}
        />
        <ExamInput id={`${section}-careNotes`} name="careNotes" label="Care notes" defaultValue={v("careNotes")} />
        <ExamInput
          id={`${section}-topography`}
          name="topography"
          label="Topography notes"
          defaultValue={v("topography")}
        />
      </div>
      <div className="mt-4">
        <ExamTextarea id={`${section}-advice`} name="advice" label="Advice given" defaultValue={v("advice")} />
      </div>
    </SectionForm>
  );
}

function EyeFields({
  section,
  eye,
  v,
  lenses,
  notation,
  fitting,
}: {
  section: ClSectionId;
  eye: "right" | "left";
  v: (p: ClEyePart) => string | undefined;
  lenses: Lens[];
  notation: AcuityNotation;
  fitting: boolean;
}) {
  const [lensId, setLensId] = useState(v("lens") ?? "");
  const lens = lenses.find((l) => l.id === lensId);
  const E = SIDE[eye];
  const id = (p: string) => `${section}-${eye}-${p}`;
  const options = Object.fromEntries(
    lenses
      .filter((l) => l.active || l.id === lensId)
      .map((l) => [
        l.id,
        `${l.manufacturer} ${l.name}${isToric(l) ? " (toric)" : ""}${l.active ? "" : " (withdrawn)"}`,
      ]),
  );
  return (
    <fieldset className="rounded-md border border-line p-3">
      <legend className="px-1 font-bold">{E} eye</legend>
      <div className="grid gap-3 sm:grid-cols-3">
        <div className="sm:col-span-3">
          <ExamSelect
            id={id("lens")}
            name={clField(eye, "lens")}
            label={fitting ? `${E} lens fitted (catalogue)` : `${E} lens worn (catalogue)`}
            options={options}
            defaultValue={v("lens")}
            onValue={setLensId}
            emptyLabel={fitting ? "— choose —" : "— not in the catalogue —"}
          />
          {lens ? (
            <p className="mt-1 text-sm text-muted" data-testid={`${section}-${eye}-lens-made`}>
              {lens.material} · {REPLACEMENTS[lens.replacement]} · BC{" "}
              {lens.baseCurvesMm.map((b) => b.toFixed(2)).join(", ")} mm · dia.{" "}
              {lens.diametersMm.map((d) => d.toFixed(1)).join(", ")} mm · {describePowers(lens)}
            </p>
          ) : null}
        </div>
        {!fitting && !lens ? (
          <>
            <ExamInput
              id={id("maker")}
              name={clField(eye, "maker")}
              label={`${E} manufacturer`}
              defaultValue={v("maker")}
            />
            <ExamInput id={id("name")} name={clField(eye, "name")} label={`${E} lens name`} defaultValue={v("name")} />
            <ExamInput
              id={id("material")}
              name={clField(eye, "material")}
              label={`${E} material`}
              defaultValue={v("material")}
            />
            <ExamSelect
              id={id("replacement")}
              name={clField(eye, "replacement")}
              label={`${E} replacement`}
              options={REPLACEMENTS}
              defaultValue={v("replacement")}
            />
          </>
        ) : null}
        <ExamInput
          id={id("bc")}
          name={clField(eye, "bc")}
          label={`${E} base curve (mm)`}
          inputMode="decimal"
          required={fitting}
          defaultValue={v("bc")}
          revalidateKey={lensId}
          validate={(t) => {
            const r = parseNumber(t, `${E} base curve (mm)`, 5, 11, { step: 0.01 });
            return r.error ?? (lens && r.value !== null ? checkBaseCurve(lens, r.value, `${E} base curve`) : undefined);
          }}
        />
        <ExamInput
          id={id("dia")}
          name={clField(eye, "dia")}
          label={`${E} diameter (mm)`}
          inputMode="decimal"
          required={fitting}
          defaultValue={v("dia")}
          revalidateKey={lensId}
          validate={(t) => {
            const r = parseNumber(t, `${E} diameter (mm)`, 7, 25, { step: 0.1 });
            return r.error ?? (lens && r.value !== null ? checkDiameter(lens, r.value, `${E} diameter`) : undefined);
          }}
        />
        <ExamInput
          id={id("power")}
          name={clField(eye, "power")}
          label={`${E} lens power`}
          required={fitting}
          placeholder={lens && isToric(lens) ? "-2.00 -1.25 x 180" : "-2.25"}
          defaultValue={v("power")}
          revalidateKey={lensId}
          validate={(t) => {
            const r = parseRxText(t, `${E} lens power`);
            if (r.error) return r.error;
            return lens && r.value
              ? checkLensPower(lens, r.value, `${E} lens power`).join(" ") || undefined
              : undefined;
          }}
        />
        <ExamInput
          id={id("kflat")}
          name={clField(eye, "kflat")}
          label={`${E} flat K (mm)`}
          inputMode="decimal"
          defaultValue={v("kflat")}
          validate={(t) => parseNumber(t, `${E} flat K (mm)`, 5, 11, { step: 0.01 }).error}
        />
        <ExamInput
          id={id("kaxis")}
          name={clField(eye, "kaxis")}
          label={`${E} flat K axis (°)`}
          inputMode="numeric"
          defaultValue={v("kaxis")}
          validate={(t) => parseNumber(t, `${E} flat K axis`, 1, 180, { integer: true }).error}
        />
        <ExamInput
          id={id("ksteep")}
          name={clField(eye, "ksteep")}
          label={`${E} steep K (mm)`}
          inputMode="decimal"
          defaultValue={v("ksteep")}
          validate={(t) => parseNumber(t, `${E} steep K (mm)`, 5, 11, { step: 0.01 }).error}
        />
        <ExamInput
          id={id("va")}
          name={clField(eye, "va")}
          label={`${E} VA with the lens`}
          defaultValue={v("va")}
          validate={(t) => parseAcuity(t, `${E} VA`, { notation, distance: "distance" }).error}
        />
        <ExamInput
          id={id("overrx")}
          name={clField(eye, "overrx")}
          label={`${E} over-refraction`}
          defaultValue={v("overrx")}
          validate={(t) => parseRxText(t, `${E} over-refraction`).error}
        />
        <ExamSelect
          id={id("centration")}
          name={clField(eye, "centration")}
          label={`${E} centration`}
          options={CENTRATION}
          defaultValue={v("centration")}
        />
        <ExamSelect
          id={id("movement")}
          name={clField(eye, "movement")}
          label={`${E} movement`}
          options={MOVEMENT}
          defaultValue={v("movement")}
        />
        <ExamSelect
          id={id("coverage")}
          name={clField(eye, "coverage")}
          label={`${E} coverage`}
          options={COVERAGE}
          defaultValue={v("coverage")}
        />
        <ExamInput
          id={id("rotation")}
          name={clField(eye, "rotation")}
          label={`${E} toric rotation (°)`}
          inputMode="numeric"
          required={fitting && !!lens && isToric(lens)}
          defaultValue={v("rotation")}
          validate={(t) => parseNumber(t, `${E} toric rotation`, 0, 90, { integer: true }).error}
        />
        <ExamSelect
          id={id("rotdir")}
          name={clField(eye, "rotdir")}
          label={`${E} rotation direction`}
          options={ROTATION}
          defaultValue={v("rotdir")}
        />
      </div>
      <fieldset className="mt-3">
        <legend className="text-sm font-semibold">
          {E} anterior eye, {GRADING_SCALE}
        </legend>
        <div className="grid gap-3 sm:grid-cols-2">
          {(Object.keys(GRADES) as GradeKey[]).map((g) => (
            <ExamInput
              key={g}
              id={id(`gr-${g}`)}
              name={clField(eye, `gr_${g}`)}
              label={`${E} ${GRADES[g].toLowerCase()}`}
              inputMode="decimal"
              defaultValue={v(`gr_${g}`)}
              validate={(t) => parseNumber(t, `${E} ${GRADES[g].toLowerCase()}`, 0, 4, { step: 0.1 }).error}
            />
          ))}
        </div>
      </fieldset>
    </fieldset>
  );
}

/** The final spectacle refraction carried to the cornea: a guide to the power to try, never the order. */
function VertexGuide({ values }: { values: Record<string, string> }) {
  const rows = (["right", "left"] as const).flatMap((eye) => {
    const rx = parseRxText(values[`final.${eye}_rx`], "").value;
    if (!rx) return [];
    const vertex = Number(values[`final.${eye}_vertex`] ?? "") || 12;
    try {
      return [
        `${SIDE[eye]}: ${vertexGuide(rx, vertex).text}${values[`final.${eye}_vertex`] ? "" : " (12 mm assumed)"}`,
      ];
    } catch {
      return [];
    }
  });
  if (!rows.length) return null;
  return (
    <div className="mb-4 rounded-md border border-line bg-canvas p-3 text-sm" data-testid="vertex-guide">
      <p className="font-semibold">Guide only: the final spectacle refraction at the cornea</p>
      <ul className="list-disc pl-5">
        {rows.map((r) => (
          <li key={r}>{r}</li>
        ))}
      </ul>
      <p className="text-muted">
        F<sub>c</sub> = F<sub>s</sub> / (1 − d·F<sub>s</sub>) per meridian. The lens fitted and the over-refraction
        decide the power prescribed.
      </p>
    </div>
  );
}
