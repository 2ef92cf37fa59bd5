/**
 * What the practice's jurisdiction decides: the dispensing standard spectacles are checked
 * against, how the prescriber's registration is worded on prescriptions, and the acuity notation
 * offered by default. Local law and the regulator's current rules govern; these are defaults.
 */
import type { DispensingStandard } from "./dispensing";

export type Jurisdiction = "uk" | "us";

export type JurisdictionRules = {
  label: string;
  dispensingStandard: DispensingStandard;
  /** The words before the prescriber's number on a prescription. */
  registrationLabel: string;
  /** Default Snellen notation: metres (6/6) or feet (20/20). */
  acuityNotation: "metres" | "feet";
};

export const JURISDICTIONS: Record<Jurisdiction, JurisdictionRules> = {
  uk: {
    label: "United Kingdom",
    // BS EN ISO 21987 is the British adoption of the international mounted-lens standard; the
    // College of Optometrists asks prescriptions to be written according to British Standards.
    dispensingStandard: "BS EN ISO 21987:2017",
    // College of Optometrists, Guidance for Professional Practice (contact-lens specification,
    // A393; prescriptions under the Sight Testing (Examination and Prescription) (No. 2)
    // Regulations 1989): the optometrist's name and GOC number.
    registrationLabel: "GOC registration no.",
    acuityNotation: "metres", // common practice: 6/6 Snellen notation in the UK
  },
  us: {
    label: "United States",
    dispensingStandard: "ANSI Z80.1-2015",
    registrationLabel: "License no.", // common practice: optometrists are licensed by their state board
    acuityNotation: "feet", // common practice: 20/20 Snellen notation in the US
  },
};

export function jurisdictionOf(code: string | null | undefined): JurisdictionRules {
  return JURISDICTIONS[code === "us" ? "us" : "uk"];
}
