/** Order states in plain words, for staff pages, the portal and reports. No framework imports. */
export const ORDER_STATES = [
  "draft",
  "sent_to_lab",
  "received",
  "checked",
  "ready_to_collect",
  "collected",
  "remake",
  "cancelled",
] as const;
export type OrderStateName = (typeof ORDER_STATES)[number];

export const STATE_LABEL: Record<OrderStateName, string> = {
  draft: "Draft",
  sent_to_lab: "Sent to lab",
  received: "Received from lab",
  checked: "Checked",
  ready_to_collect: "Ready to collect",
  collected: "Collected",
  remake: "Remake",
  cancelled: "Cancelled",
};

/** What the patient reads in the portal. */
export const PATIENT_STATE_LABEL: Record<OrderStateName, string> = {
  draft: "Being prepared",
  sent_to_lab: "Being made",
  received: "Arrived, being checked",
  checked: "Arrived, being checked",
  ready_to_collect: "Ready to collect",
  collected: "Collected",
  remake: "Being made again",
  cancelled: "Cancelled",
};

export const LENS_TYPE_LABEL = {
  single_vision: "Single vision",
  bifocal: "Bifocal",
  varifocal: "Varifocal (progressive)",
  occupational: "Occupational (near and intermediate)",
} as const;
export type SpectacleLensType = keyof typeof LENS_TYPE_LABEL;

/** Materials offered on the order form: name and refractive index. // common practice */
export const LENS_MATERIALS = [
  "Standard plastic (CR-39) 1.50",
  "Trivex 1.53",
  "Polycarbonate 1.59",
  "Mid index 1.60",
  "High index 1.67",
  "High index 1.74",
  "Glass 1.52",
] as const;

export const COATINGS = ["Hard coat", "Anti-reflection", "UV filter", "Hydrophobic", "Photochromic"] as const;

/** The dispensing-check lens family for each spectacle lens type. */
export function checkLensType(t: SpectacleLensType): "single-vision" | "multifocal" | "progressive" {
  return t === "single_vision" ? "single-vision" : t === "bifocal" ? "multifocal" : "progressive";
}

export function orderLabel(n: number) {
  return `ORD-${String(n).padStart(5, "0")}`;
}

/** Whole days between two instants (for "at the lab for N days"). */
export function daysBetween(from: Date, to: Date) {
  return Math.floor((to.getTime() - from.getTime()) / 86_400_000);
}
