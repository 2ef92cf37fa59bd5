/**
 * The exam's sections, in the order the page shows them: the id a save names, the card's title
 * and the short label of the page's section index. The page, the server's save (which refuses an
 * id not listed here) and the referral letter's measurement tables all read this one list.
 */
import { REFRACTION_KINDS, REFRACTION_LABEL, type RefractionKind } from "./sections";

export type RefractionSectionId = `refraction:${RefractionKind}`;
export type ExamSectionId =
  | "redflags"
  | "history"
  | "acuity"
  | RefractionSectionId
  | "binocular"
  | "cl_fitting"
  | "cl_aftercare"
  | "pupils"
  | "ac"
  | "iop"
  | "colour"
  | "fields"
  | "segments"
  | "disc"
  | "fundus"
  | "dilation"
  | "assessment";

export type ExamSection = { id: ExamSectionId; title: string; nav: string };

export const EXAM_SECTIONS: readonly ExamSection[] = [
  { id: "redflags", title: "Red-flag symptoms", nav: "Red flags" },
  { id: "history", title: "Case history", nav: "History" },
  { id: "acuity", title: "Visual acuity", nav: "Acuity" },
  ...REFRACTION_KINDS.map((k) => ({
    id: `refraction:${k}` as const,
    title: REFRACTION_LABEL[k],
    nav: REFRACTION_LABEL[k].split(" (")[0]!,
  })),
  { id: "binocular", title: "Binocular vision", nav: "Binocular" },
  { id: "cl_fitting", title: "Contact-lens fitting", nav: "CL fitting" },
  { id: "cl_aftercare", title: "Contact-lens aftercare", nav: "CL aftercare" },
  { id: "pupils", title: "Pupils", nav: "Pupils" },
  { id: "ac", title: "Anterior chamber", nav: "Anterior chamber" },
  { id: "iop", title: "Intraocular pressure", nav: "IOP" },
  { id: "colour", title: "Colour vision", nav: "Colour" },
  { id: "fields", title: "Visual fields and blind spot", nav: "Fields" },
  { id: "segments", title: "Anterior and posterior segment", nav: "Segments" },
  { id: "disc", title: "Optic disc", nav: "Disc" },
  { id: "fundus", title: "Vitreous, macula and periphery", nav: "Fundus" },
  { id: "dilation", title: "Dilation", nav: "Dilation" },
  { id: "assessment", title: "Assessment, plan and diagnoses", nav: "Assessment" },
];

export const EXAM_SECTION_IDS: readonly ExamSectionId[] = EXAM_SECTIONS.map((s) => s.id);

export function isExamSectionId(id: string): id is ExamSectionId {
  return (EXAM_SECTION_IDS as readonly string[]).includes(id);
}

/** The card title of a section. */
export function sectionTitle(id: ExamSectionId): string {
  return EXAM_SECTIONS.find((s) => s.id === id)!.title;
}

export const refractionSectionId = (kind: RefractionKind): RefractionSectionId => `refraction:${kind}`;

/** Whether the saved values (as formValues names them) hold anything for a section. */
export function sectionHasValues(section: string, values: Record<string, string>, diagnoses: string[]) {
  const keys = Object.keys(values).filter((k) => values[k] !== "");
  const any = (test: (k: string) => boolean) => keys.some(test);
  switch (section) {
    case "redflags":
      return any((k) => k.startsWith("rf_"));
    case "pupils":
      return any((k) => k.includes("_pup_"));
    case "ac":
      return any((k) => k.includes("_ac_"));
    case "disc":
      return any((k) => k.includes("_disc_"));
    case "fundus":
      return any((k) => k.includes("_fu_"));
    case "dilation":
      return any((k) => k.startsWith("dil"));
    case "history":
      return any((k) =>
        ["reason", "symptoms", "ocularHistory", "generalHistory", "medications", "familyHistory"].includes(k),
      );
    case "acuity":
      return any((k) => k.startsWith("va_"));
    case "binocular":
      return any((k) => k.startsWith("bv_"));
    case "cl_fitting":
    case "cl_aftercare":
      return any((k) => k.startsWith(`${section}.`));
    case "iop":
      return any((k) => /_mmHg(_\d)?$/.test(k) || k.endsWith("_cct"));
    case "colour":
      return any((k) => k.endsWith("_test") || k.endsWith("_result"));
    case "fields":
      return any((k) => k.endsWith("_fmethod"));
    case "segments":
      return any((k) => /_(anterior|posterior)_/.test(k));
    case "assessment":
      return (
        diagnoses.length > 0 || any((k) => ["assessment", "plan", "recallMonths"].includes(k) || k.startsWith("dx_"))
      );
    default:
      return section.startsWith("refraction:") && any((k) => k.startsWith(`${section.slice("refraction:".length)}.`));
  }
}

/** Where a section stands as the server knows it: its last save, and its last refusal if newer. */
export type StoredSectionState = {
  savedAt: string | null;
  refused: { at: string; message: string; values: [string, string][]; errors: Record<string, string[]> } | null;
};

/** The title of a section id, or the id itself if it is not a section (never shown for a listed one). */
export function titleOf(id: string): string {
  return isExamSectionId(id) ? sectionTitle(id) : id === "triage" ? "Triage" : id;
}

/** The warning before signing an exam without a final refraction (the server and the page say the same). */
export const NO_FINAL_WARNING =
  "There is no final refraction: no prescription can be issued from this exam until one is given (after signing, by addendum).";
