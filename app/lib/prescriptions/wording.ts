/** What a spectacle prescription says it is for, and the statements it may carry: one list for the form, the server and the PDF. */
export const LENS_USES = {
  distance: "Distance",
  near: "Near (reading)",
  intermediate: "Intermediate (computer)",
  bifocal: "Bifocal",
  varifocal: "Varifocal",
  occupational: "Occupational (near and intermediate)",
  all_purposes: "All purposes",
} as const;
export type LensUse = keyof typeof LENS_USES;

export const STATEMENTS = {
  none: "No statement",
  not_needed: "No prescription is needed",
  no_change: "No clinically significant change",
} as const;
export type Statement = keyof typeof STATEMENTS;

export const isLensUse = (value: string): value is LensUse => Object.hasOwn(LENS_USES, value);
export const isStatement = (value: string): value is Statement => Object.hasOwn(STATEMENTS, value);
