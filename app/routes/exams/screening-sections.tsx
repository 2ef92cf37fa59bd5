/** Colour vision, visual fields and blind spot, and the anterior and posterior segment. */
import { StatusBadge } from "~/components/ui/notice";
import {
  COLOUR_RESULTS,
  COLOUR_TESTS,
  EYE_LABEL,
  EYES,
  FIELD_METHODS,
  parseNumber,
  RELIABILITY,
  SEGMENT_STRUCTURES,
  type EyeKey,
  type SegmentKey,
} from "~/lib/exam/sections";
import { screenColourVision, type ReferralPrompt } from "~/lib/optics";
import { ExamInput, ExamSelect, ExamTextarea, SectionForm } from "./exam-form";
import { sectionTitle } from "~/lib/exam/section-list";

type V = { values: Record<string, string>; readOnly: boolean };

function PerEyeGrid({ children }: { children: (eye: EyeKey, E: string) => React.ReactNode }) {
  return (
    <div className="grid gap-6 md:grid-cols-2">
      {EYES.map((eye) => (
        <fieldset key={eye} className="rounded-md border border-line p-3">
          <legend className="px-1 text-sm font-bold">{EYE_LABEL[eye]}</legend>
          <div className="grid gap-3 sm:grid-cols-2">{children(eye, eye === "right" ? "Right" : "Left")}</div>
        </fieldset>
      ))}
    </div>
  );
}

export function ColourSection({ values, readOnly, prompts }: V & { prompts: ReferralPrompt[] }) {
  return (
    <SectionForm section="colour" title={sectionTitle("colour")} readOnly={readOnly} prompts={prompts}>
      <PerEyeGrid>
        {(eye, E) => (
          <>
            <ExamSelect
              id={`cv-${eye}-test`}
              name={`${eye}_test`}
              label={`${E} colour test`}
              defaultValue={values[`${eye}_test`]}
              options={COLOUR_TESTS}
            />
            <ExamSelect
              id={`cv-${eye}-result`}
              name={`${eye}_result`}
              label={`${E} colour result`}
              defaultValue={values[`${eye}_result`]}
              options={COLOUR_RESULTS}
            />
            <ExamInput
              id={`cv-${eye}-correct`}
              name={`${eye}_correct`}
              label={`${E} plates read`}
              inputMode="numeric"
              defaultValue={values[`${eye}_correct`]}
            />
            <ExamInput
              id={`cv-${eye}-shown`}
              name={`${eye}_shown`}
              label={`${E} plates shown`}
              inputMode="numeric"
              defaultValue={values[`${eye}_shown`]}
            />
            <ExamInput
              id={`cv-${eye}-notes`}
              name={`${eye}_cvnotes`}
              label={`${E} colour notes`}
              defaultValue={values[`${eye}_cvnotes`]}
            />
            <PlateScreening
              test={values[`${eye}_test`]}
              correct={values[`${eye}_correct`]}
              shown={values[`${eye}_shown`]}
            />
          </>
        )}
      </PerEyeGrid>
    </SectionForm>
  );
}

/** The engine's reading of a saved plate score (38-plate edition only has a built-in criterion). */
function PlateScreening({ test, correct, shown }: { test?: string; correct?: string; shown?: string }) {
  if (test !== "plates_38" || correct === undefined || shown === undefined) return null;
  let text: string;
  let tone: "success" | "warning" | "info" = "info";
  let rule = "";
  try {
    const r = screenColourVision({ test: "ishihara-38", platesCorrect: Number(correct), platesShown: Number(shown) });
    text = `Plate score reads as: ${r.result} (${r.reasons.join("; ")})`;
    tone = r.result === "normal" ? "success" : r.result === "deficiency suspected" ? "warning" : "info";
    rule = `${r.rule}. Source: ${r.source}.`;
  } catch (e) {
    text = e instanceof Error ? e.message : String(e);
  }
  return (
    <div className="text-xs sm:col-span-2" data-testid="plate-screening">
      <StatusBadge tone={tone}>{text}</StatusBadge>
      {rule ? <p className="mt-1 text-muted">{rule} Check before recording the result.</p> : null}
    </div>
  );
}

export function FieldsSection({ values, readOnly, prompts }: V & { prompts: ReferralPrompt[] }) {
  const deg = (E: string, what: string, min: number, max: number) => (t: string) =>
    parseNumber(t, `${E} ${what}`, min, max).error;
  return (
    <SectionForm
      section="fields"
      title={sectionTitle("fields")}
      readOnly={readOnly}
      prompts={prompts}
      description="Blind-spot centre in degrees from fixation: horizontal positive temporally, vertical positive above. Attach an automated printout under Attachments."
    >
      <PerEyeGrid>
        {(eye, E) => (
          <>
            <ExamSelect
              id={`vf-${eye}-method`}
              name={`${eye}_fmethod`}
              label={`${E} field method`}
              defaultValue={values[`${eye}_fmethod`]}
              options={FIELD_METHODS}
            />
            <ExamSelect
              id={`vf-${eye}-rel`}
              name={`${eye}_reliability`}
              label={`${E} reliability`}
              defaultValue={values[`${eye}_reliability`]}
              options={RELIABILITY}
            />
            <ExamInput
              id={`vf-${eye}-x`}
              name={`${eye}_bsX`}
              label={`${E} blind-spot centre, horizontal (°)`}
              inputMode="decimal"
              defaultValue={values[`${eye}_bsX`]}
              validate={deg(E, "blind-spot centre, horizontal", -40, 40)}
            />
            <ExamInput
              id={`vf-${eye}-y`}
              name={`${eye}_bsY`}
              label={`${E} blind-spot centre, vertical (°)`}
              inputMode="decimal"
              defaultValue={values[`${eye}_bsY`]}
              validate={deg(E, "blind-spot centre, vertical", -30, 30)}
            />
            <ExamInput
              id={`vf-${eye}-w`}
              name={`${eye}_bsW`}
              label={`${E} blind-spot width (°)`}
              inputMode="decimal"
              defaultValue={values[`${eye}_bsW`]}
              validate={deg(E, "blind-spot width", 0.1, 40)}
            />
            <ExamInput
              id={`vf-${eye}-h`}
              name={`${eye}_bsH`}
              label={`${E} blind-spot height (°)`}
              inputMode="decimal"
              defaultValue={values[`${eye}_bsH`]}
              validate={deg(E, "blind-spot height", 0.1, 40)}
            />
            <label className="flex min-h-11 items-center gap-2 text-sm font-semibold">
              <input
                type="checkbox"
                name={`${eye}_defect`}
                defaultChecked={values[`${eye}_defect`] === "on"}
                className="size-5 shrink-0"
              />
              {E}: field defect present
            </label>
            <ExamInput
              id={`vf-${eye}-defects`}
              name={`${eye}_defects`}
              label={`${E} defects described`}
              defaultValue={values[`${eye}_defects`]}
            />
          </>
        )}
      </PerEyeGrid>
    </SectionForm>
  );
}

export function SegmentsSection({ values, readOnly }: V) {
  return (
    <SectionForm
      section="segments"
      title={sectionTitle("segments")}
      readOnly={readOnly}
      description="Tick the structures seen as normal; describe anything else."
    >
      <div className="grid gap-6 md:grid-cols-2">
        {EYES.map((eye) =>
          (Object.keys(SEGMENT_STRUCTURES) as SegmentKey[]).map((segment) => {
            const ticked = (values[`${eye}_${segment}_normal`] ?? "").split(",");
            const E = eye === "right" ? "Right" : "Left";
            return (
              <fieldset key={`${eye}-${segment}`} className="rounded-md border border-line p-3">
                <legend className="px-1 text-sm font-bold">
                  {E} eye, {segment} segment
                </legend>
                <div className="grid grid-cols-2 gap-2">
                  {Object.entries(SEGMENT_STRUCTURES[segment]).map(([k, label]) => (
                    <label key={k} className="flex min-h-11 items-center gap-2 text-sm">
                      <input
                        type="checkbox"
                        name={`${eye}_${segment}_normal`}
                        value={k}
                        defaultChecked={ticked.includes(k)}
                        className="size-5 shrink-0"
                      />
                      {label} normal
                    </label>
                  ))}
                </div>
                <div className="mt-3">
                  <ExamTextarea
                    id={`seg-${eye}-${segment}`}
                    name={`${eye}_${segment}_notes`}
                    label={`${E} ${segment} findings`}
                    defaultValue={values[`${eye}_${segment}_notes`]}
                  />
                </div>
              </fieldset>
            );
          }),
        )}
      </div>
    </SectionForm>
  );
}
