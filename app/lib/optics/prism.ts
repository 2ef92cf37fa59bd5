/**
 * Prism induced by decentring a lens (Prentice's rule and its matrix form).
 *
 * Prentice CF. A metric system of numbering and measuring prisms. Arch
 * Ophthalmol 1890 — P (Δ) = c (cm) × F (D).
 * Matrix form for sphero-cylinders: Long WF. A matrix formalism for
 * decentration problems. Am J Optom Physiol Opt 1976;53:27–33.
 */
import { assertFinite, assertSphCyl, clean, RxError, type SphCyl } from "./core";

/** Direction of a prism base, or of a lens decentration, relative to the eye. */
export type PrismBase = "in" | "out" | "up" | "down";

/** Which eye a lens is for; needed to tell nasal ("in") from temporal ("out"). */
export type Eye = "right" | "left";

/** A prism magnitude in Δ with its base direction (null when there is no prism). */
export type InducedPrism = { prism: number; base: PrismBase | null };

const OPPOSITE: Record<PrismBase, PrismBase> = { in: "out", out: "in", up: "down", down: "up" };

/**
 * Prentice's rule: prism magnitude P = |F| × c, with c the decentration in
 * centimetres (decentrationMm / 10). Example: 4.00 D decentred 5 mm gives 2Δ.
 */
export function prenticePrism(powerD: number, decentrationMm: number): number {
  assertFinite(powerD, "Power", "prenticePrism");
  assertFinite(decentrationMm, "Decentration", "prenticePrism");
  return clean((Math.abs(powerD) * Math.abs(decentrationMm)) / 10);
}

/**
 * Prism and base direction when a lens of power `powerD` (in the meridian of
 * decentration) has its optical centre moved `decentrationMm` in `direction`
 * from the line of sight. A plus lens gives base in the direction of
 * decentration (plus decentred in → base in); a minus lens the opposite.
 */
export function inducedPrism(powerD: number, decentrationMm: number, direction: PrismBase): InducedPrism {
  assertFinite(powerD, "Power", "inducedPrism");
  assertFinite(decentrationMm, "Decentration", "inducedPrism");
  if (decentrationMm < 0) {
    throw new RxError(`Decentration must not be negative (got ${decentrationMm} mm); give the direction instead`);
  }
  if (!Object.hasOwn(OPPOSITE, direction)) throw new RxError(`Unknown decentration direction "${String(direction)}"`);
  const prism = prenticePrism(powerD, decentrationMm);
  if (prism === 0) return { prism: 0, base: null };
  return { prism, base: powerD > 0 ? direction : OPPOSITE[direction] };
}

/** Horizontal and vertical prism at the line of sight, from {@link decentrationPrism}. */
export type DecentrationPrism = {
  horizontal: InducedPrism;
  vertical: InducedPrism;
  /** Magnitude of the resultant (oblique) prism, Δ. */
  resultant: number;
};

/**
 * Prism at the line of sight when the optical centre of a sphero-cylinder is
 * displaced `inMm` nasally (negative = temporally) and `upMm` upwards
 * (negative = downwards) from it. Uses the dioptric power matrix
 * F = [[S + C sin²α, −C sinα cosα], [−C sinα cosα, S + C cos²α]] and the
 * prism vector (base direction) P = F·c, c in cm (Long 1976), so oblique
 * cylinders correctly give prism in both directions.
 */
export function decentrationPrism(
  rx: SphCyl,
  eye: Eye,
  decentration: { inMm: number; upMm: number },
): DecentrationPrism {
  assertSphCyl(rx, "decentrationPrism");
  if (eye !== "right" && eye !== "left") throw new RxError(`Eye must be "right" or "left" (got "${String(eye)}")`);
  assertFinite(decentration?.inMm, "Horizontal decentration", "decentrationPrism");
  assertFinite(decentration.upMm, "Vertical decentration", "decentrationPrism");
  const a = rx.axis * (Math.PI / 180);
  const sin = Math.sin(a);
  const cos = Math.cos(a);
  const fxx = rx.sphere + rx.cylinder * sin * sin;
  const fxy = -rx.cylinder * sin * cos;
  const fyy = rx.sphere + rx.cylinder * cos * cos;
  // Examiner's view: x to the patient's left, y up. Nasal is +x for the right eye.
  const x = ((eye === "right" ? 1 : -1) * decentration.inMm) / 10;
  const y = decentration.upMm / 10;
  const baseX = fxx * x + fxy * y;
  const baseY = fxy * x + fyy * y;
  const towardNose = clean(eye === "right" ? baseX : -baseX);
  const upward = clean(baseY);
  return {
    horizontal: { prism: Math.abs(towardNose), base: towardNose === 0 ? null : towardNose > 0 ? "in" : "out" },
    vertical: { prism: Math.abs(upward), base: upward === 0 ? null : upward > 0 ? "up" : "down" },
    resultant: clean(Math.hypot(towardNose, upward)),
  };
}

/** Result of {@link verticalImbalance}. */
export type VerticalImbalance = {
  /** |P_R − P_L| in Δ at the reading point. */
  imbalance: number;
  right: InducedPrism;
  left: InducedPrism;
  /** Direction of the net relative prism, expressed for each eye (equivalent statements). */
  netBaseRight: "up" | "down" | null;
  netBaseLeft: "up" | "down" | null;
  readingDropMm: number;
};

/**
 * Vertical prismatic imbalance at the reading level when both eyes look
 * `readingDropMm` below the distance optical centres (default 10 mm; common
 * practice puts the reading level 8–10 mm below). Each eye's vertical prism
 * is F(90) × drop/10 (Prentice, using the power in the vertical meridian,
 * which is exactly the vertical component of the matrix form); the imbalance
 * is the difference between the eyes.
 */
export function verticalImbalance(rightRx: SphCyl, leftRx: SphCyl, readingDropMm = 10): VerticalImbalance {
  assertFinite(readingDropMm, "Reading drop", "verticalImbalance");
  if (readingDropMm < 0) throw new RxError(`Reading drop must not be negative (got ${readingDropMm} mm)`);
  // Looking below the optical centre is the same as the centre being above the line of sight.
  const right = decentrationPrism(rightRx, "right", { inMm: 0, upMm: readingDropMm }).vertical;
  const left = decentrationPrism(leftRx, "left", { inMm: 0, upMm: readingDropMm }).vertical;
  const signedPrism = (p: InducedPrism) => (p.base === "down" ? -p.prism : p.prism);
  const difference = clean(signedPrism(right) - signedPrism(left));
  return {
    imbalance: Math.abs(difference),
    right,
    left,
    netBaseRight: difference === 0 ? null : difference > 0 ? "up" : "down",
    netBaseLeft: difference === 0 ? null : difference > 0 ? "down" : "up",
    readingDropMm,
  };
}
