/** The exam's clinical sections, in the order of the one section list. */
import type { Route } from "./+types/exam";
import { REFRACTION_KINDS } from "~/lib/exam/sections";
import {
  AnteriorChamberSection,
  DilationSection,
  DiscSection,
  FundusSection,
  PupilsSection,
  RedFlagsSection,
} from "./findings-sections";
import { BinocularSection, HistorySection, PreviousFinal, RefractionSection } from "./history-refraction";
import { AcuitySection, AssessmentSection, IopSection } from "./measure-sections";
import { ContactLensSection } from "./contact-lens-sections";
import { ColourSection, FieldsSection, SegmentsSection } from "./screening-sections";

type LoaderData = Route.ComponentProps["loaderData"];

export function ExamSections({
  data: d,
  readOnly,
  shown,
}: {
  data: LoaderData;
  readOnly: boolean;
  shown: (section: string) => boolean;
}) {
  const { values, previous, prompts } = d;
  const promptsOf = (codes: string[]) => prompts.filter((p) => codes.some((c) => p.code.startsWith(c)));
  return (
    <>
      {shown("redflags") ? <RedFlagsSection values={values} readOnly={readOnly} /> : null}
      {shown("history") ? <HistorySection values={values} readOnly={readOnly} /> : null}
      {shown("acuity") ? (
        <AcuitySection
          values={values}
          readOnly={readOnly}
          prompts={promptsOf(["ACUITY"])}
          practiceNotation={d.acuityNotation}
        />
      ) : null}
      <PreviousFinal previous={previous} />
      {REFRACTION_KINDS.filter((kind) => shown(`refraction:${kind}`)).map((kind) => (
        <RefractionSection
          key={kind}
          kind={kind}
          values={values}
          readOnly={readOnly}
          previous={kind === "final" || kind === "subjective" ? previous : null}
          notation={d.acuityNotation}
          addendumNote={kind === "final" ? d.finalFromAddendum : null}
        />
      ))}
      {shown("binocular") ? <BinocularSection values={values} readOnly={readOnly} /> : null}
      {(["cl_fitting", "cl_aftercare"] as const)
        .filter((s) => shown(s))
        .map((s) => (
          <ContactLensSection
            key={s}
            section={s}
            values={values}
            readOnly={readOnly}
            lenses={d.lenses}
            notation={d.acuityNotation}
          />
        ))}
      {shown("pupils") ? <PupilsSection values={values} readOnly={readOnly} /> : null}
      {shown("ac") ? <AnteriorChamberSection values={values} readOnly={readOnly} /> : null}
      {shown("iop") ? (
        <IopSection values={values} readOnly={readOnly} prompts={promptsOf(["IOP"])} timeZone={d.timeZone} />
      ) : null}
      {shown("colour") ? <ColourSection values={values} readOnly={readOnly} prompts={promptsOf(["COLOUR"])} /> : null}
      {shown("fields") ? (
        <FieldsSection values={values} readOnly={readOnly} prompts={promptsOf(["BLIND_SPOT", "FIELD"])} />
      ) : null}
      {shown("segments") ? <SegmentsSection values={values} readOnly={readOnly} /> : null}
      {shown("disc") ? <DiscSection values={values} readOnly={readOnly} /> : null}
      {shown("fundus") ? <FundusSection values={values} readOnly={readOnly} /> : null}
      {shown("dilation") ? <DilationSection values={values} readOnly={readOnly} nowLocal={d.nowLocal} /> : null}
      {shown("assessment") ? <AssessmentSection values={values} readOnly={readOnly} /> : null}
    </>
  );
}
