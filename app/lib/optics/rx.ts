/**
 * Reading, writing and rearranging sphero-cylindrical prescriptions.
 */
import {
  assertFinite,
  assertSphCyl,
  clean,
  noNegativeZero,
  normaliseAxis,
  quote,
  RxError,
  signed,
  type CylinderForm,
  type SphCyl,
} from "./core";

/** Largest sphere or cylinder magnitude parseRx accepts, in dioptres. */
export const MAX_PARSED_POWER_D = 30;

type WordKind = "plano" | "sphereLabel" | "cylinderLabel" | "dioptre" | "axisMarker" | "slash" | "degree" | "unknown";

type Token = { kind: "number"; text: string; value: number; signed: boolean } | { kind: WordKind; text: string };

const MINUS_SIGNS = /[\u2212\u2012\u2013\uFE63\uFF0D]/g;
const NUMBER = /[+-]?\s*(?:\d+(?:\.\d*)?|\.\d+)/y;
// Longest spellings first, so "plano" wins over "pl" and "axis" over "ax".
// Labels may run into each other ("-0.50DCx90"); anything else is one unknown word.
const WORD = /plano|pl\.?|sphere|sph\.?|d\.s\.?|ds|d\.c\.?|dc|cyl\.?|axis|ax\.?|x|d|[a-z]+/y;
const SPACE = /\s+/y;

function wordKind(word: string): WordKind {
  switch (word.replace(/\.$/, "")) {
    case "plano":
    case "pl":
      return "plano";
    case "sphere":
    case "sph":
    case "d.s":
    case "ds":
      return "sphereLabel";
    case "d.c":
    case "dc":
    case "cyl":
      return "cylinderLabel";
    case "axis":
    case "ax":
    case "x":
      return "axisMarker";
    case "d":
      return "dioptre";
    default:
      return "unknown";
  }
}

function tokenise(normalised: string, where: string): Token[] {
  const tokens: Token[] = [];
  let i = 0;
  while (i < normalised.length) {
    SPACE.lastIndex = i;
    if (SPACE.test(normalised)) {
      i = SPACE.lastIndex;
      continue;
    }
    const ch = normalised.charAt(i);
    NUMBER.lastIndex = i;
    const num = NUMBER.exec(normalised);
    if (num) {
      const text = num[0];
      const compact = text.replace(/\s+/g, "");
      tokens.push({ kind: "number", text: compact, value: Number(compact), signed: /^[+-]/.test(compact) });
      i = NUMBER.lastIndex;
      continue;
    }
    if (ch === "+" || ch === "-") {
      throw new RxError(`Sign "${ch}" is not followed by a power in ${where}`);
    }
    if (ch === "/" || ch === "@" || ch === "°") {
      tokens.push({ kind: ch === "/" ? "slash" : ch === "@" ? "axisMarker" : "degree", text: ch });
      i += 1;
      continue;
    }
    WORD.lastIndex = i;
    const word = WORD.exec(normalised);
    if (word) {
      tokens.push({ kind: wordKind(word[0]), text: word[0] });
      i = WORD.lastIndex;
      continue;
    }
    tokens.push({ kind: "unknown", text: ch });
    i += 1;
  }
  return tokens;
}

function checkPower(token: Extract<Token, { kind: "number" }>, what: string, where: string): number {
  if (!Number.isFinite(token.value)) {
    throw new RxError(`${what} "${token.text}" is not a number in ${where}`);
  }
  if (Math.abs(token.value) > MAX_PARSED_POWER_D) {
    throw new RxError(`${what} ${token.text} D is beyond ±${MAX_PARSED_POWER_D} D in ${where}`);
  }
  return noNegativeZero(token.value);
}

function checkAxis(token: Token | undefined, marker: string, where: string): number {
  if (!token || token.kind !== "number") {
    throw new RxError(`Axis marker "${marker}" is not followed by an axis in ${where}`);
  }
  if (token.signed) {
    throw new RxError(`Axis ${token.text} must be an unsigned whole number of degrees in ${where}`);
  }
  if (!Number.isInteger(token.value)) {
    throw new RxError(`Axis ${token.text} is not a whole number of degrees in ${where}`);
  }
  if (token.value > 180) {
    throw new RxError(`Axis ${token.text} is out of range 1–180 in ${where}`);
  }
  // Axis 0 is the same meridian as 180 and clinicians read it so.
  return token.value === 0 ? 180 : token.value;
}

/**
 * Parses a written sphero-cylindrical prescription.
 *
 * Accepted, in order: a sphere (optional sign: "+", "-", U+2212 minus or an
 * en dash; "pl", "plano" or "0" for zero; "-2", "-2.5", "-.75"), an optional
 * sphere label ("DS", "D.S.", "sph", "D"), an optional "/" separator, then an
 * optional cylinder with optional "DC"/"cyl"/"D" label and an axis introduced
 * by "x", "X", "×", "@" or "axis" (leading zeros allowed: "x 005"). A lone
 * labelled cylinder ("-0.50 DC x 90") is read on a plano sphere.
 *
 * Behaviour a caller must know:
 * - Axis 0 is read as 180 (same meridian); axis 181 and above throws.
 * - A non-zero cylinder without an axis throws; a zero cylinder gives a sphere.
 * - The cylinder keeps the sign it was written with (no transposition);
 *   an unsigned number is read as positive.
 * - Powers beyond ±30 D throw; off-step values such as -2.12 are accepted.
 * - The result has no -0, an integer axis 1..180, and cylinder 0 / axis 180
 *   for a sphere.
 *
 * @throws RxError naming the problem and quoting the input.
 */
export function parseRx(text: string): SphCyl {
  if (typeof text !== "string") {
    throw new RxError(`A prescription must be text (got ${typeof text})`);
  }
  const where = quote(text);
  const normalised = text
    .replace(MINUS_SIGNS, "-")
    .replace(/\u00D7/g, "x")
    .toLowerCase()
    .trim();
  if (normalised === "") throw new RxError("Empty prescription");

  const tokens = tokenise(normalised, where);
  let i = 0;
  const peek = (): Token | undefined => tokens[i];

  const first = tokens[i++];
  let sphere: number;
  if (first?.kind === "number") sphere = checkPower(first, "Sphere", where);
  else if (first?.kind === "plano") sphere = 0;
  else throw new RxError(`Expected a sphere power or "plano" at "${first?.text ?? ""}" in ${where}`);

  let cylinder = 0;
  /** The cylinder as typed, once one has been read. */
  let cylinderText: string | undefined;
  let axis: number | undefined;
  let axisMarker = "";

  if (peek()?.kind === "dioptre") i++;
  if (peek()?.kind === "sphereLabel") {
    i++;
  } else if (first.kind === "number" && peek()?.kind === "cylinderLabel") {
    // A lone cylinder such as "-0.50 DC x 90" is written on a plano sphere.
    i++;
    cylinder = checkPower(first, "Cylinder", where);
    cylinderText = first.text;
    sphere = 0;
  }

  if (cylinderText === undefined) {
    const sawSlash = peek()?.kind === "slash";
    if (sawSlash) i++;
    const cylToken = peek();
    if (cylToken?.kind === "number") {
      cylinder = checkPower(cylToken, "Cylinder", where);
      cylinderText = cylToken.text;
      i++;
      if (peek()?.kind === "dioptre") i++;
      if (peek()?.kind === "cylinderLabel") i++;
    } else if (sawSlash) {
      throw new RxError(`Expected a cylinder after "/" in ${where}`);
    }
  }

  const markerToken = peek();
  if (markerToken?.kind === "axisMarker") {
    if (cylinderText === undefined) {
      throw new RxError(`Axis given without a cylinder in ${where}`);
    }
    axisMarker = markerToken.text;
    i++;
    axis = checkAxis(tokens[i], axisMarker, where);
    i++;
    if (peek()?.kind === "degree") i++;
  }

  const rest = peek();
  if (rest) {
    if (rest.kind === "axisMarker" && axis !== undefined) {
      const second = tokens[i + 1];
      throw new RxError(
        `Two axes given ("${axisMarker} ${axis}" and "${rest.text} ${second?.text ?? ""}") in ${where}`,
      );
    }
    if (rest.kind === "number" && axis === undefined && cylinderText !== undefined) {
      throw new RxError(`Number ${rest.text} needs an axis marker ("x") before it in ${where}`);
    }
    throw new RxError(`Unexpected "${rest.text}" in ${where}`);
  }

  if (cylinder === 0) return { sphere, cylinder: 0, axis: 180 };
  if (axis === undefined) {
    throw new RxError(`Cylinder ${cylinderText ?? ""} D has no axis in ${where}`);
  }
  return { sphere, cylinder, axis };
}

/**
 * Rewrites a sphero-cylinder in the requested cylinder form (transposing if
 * needed). Values are not rounded; -0 becomes 0 and the axis is normalised.
 */
export function toCylinderForm(rx: SphCyl, form: CylinderForm): SphCyl {
  assertSphCyl(rx, "toCylinderForm");
  if (rx.cylinder === 0) return { sphere: noNegativeZero(rx.sphere), cylinder: 0, axis: 180 };
  if ((form === "minus" && rx.cylinder > 0) || (form === "plus" && rx.cylinder < 0)) return transpose(rx);
  return { sphere: noNegativeZero(rx.sphere), cylinder: rx.cylinder, axis: normaliseAxis(rx.axis) };
}

/**
 * Transposes between plus- and minus-cylinder form:
 * S' = S + C, C' = −C, axis' = axis ± 90 (the standard transposition rule).
 */
export function transpose(rx: SphCyl): SphCyl {
  assertSphCyl(rx, "transpose");
  if (rx.cylinder === 0) return { sphere: clean(rx.sphere), cylinder: 0, axis: 180 };
  return {
    sphere: clean(rx.sphere + rx.cylinder),
    cylinder: clean(-rx.cylinder),
    axis: normaliseAxis(rx.axis + 90),
  };
}

/** Spherical equivalent M = S + C/2 (the mean of the two principal meridians). */
export function sphericalEquivalent(rx: SphCyl): number {
  assertSphCyl(rx, "sphericalEquivalent");
  return clean(rx.sphere + rx.cylinder / 2);
}

function roundHalfAwayFromZero(value: number, step: number): number {
  const q = Math.abs(value / step);
  const n = Math.floor(q + 0.5 + 1e-9);
  return clean((value < 0 ? -n : n) * step);
}

/**
 * Rounds a sphero-cylinder to a power step (default 0.25 D) meridian by
 * meridian: the two principal meridian powers (S along the axis, S + C at
 * 90° to it) are each rounded to the nearest step (halves away from zero) and
 * the lens is rebuilt from them. Unlike rounding sphere and cylinder
 * separately, this gives the same lens whichever cylinder form is supplied.
 * The cylinder form and axis are kept; a cylinder that rounds to zero leaves
 * a sphere (axis 180).
 */
export function roundRx(rx: SphCyl, step = 0.25): SphCyl {
  assertSphCyl(rx, "roundRx");
  assertFinite(step, "Rounding step", "roundRx");
  if (step <= 0) throw new RxError(`Rounding step must be positive (got ${step}) in roundRx`);
  const sphere = roundHalfAwayFromZero(rx.sphere, step);
  const other = roundHalfAwayFromZero(rx.sphere + rx.cylinder, step);
  const cylinder = clean(other - sphere);
  return { sphere, cylinder, axis: cylinder === 0 ? 180 : normaliseAxis(rx.axis) };
}

/**
 * Formats a prescription as written on an Rx: sign always shown, two
 * decimals, axis as three digits ("x 005"), "plano" for a zero sphere,
 * "DS" for a sphere-only lens.
 *
 * Examples: "-2.25 -0.75 x 175", "plano", "+1.00 DS", "plano -0.50 x 090".
 *
 * @param opts.form  cylinder form to write (default "minus"; transposes if needed)
 * @param opts.step  if given, the lens is first rounded with {@link roundRx}
 */
export function formatRx(rx: SphCyl, opts: { form?: CylinderForm; step?: number } = {}): string {
  assertSphCyl(rx, "formatRx");
  const stepped = opts.step === undefined ? rx : roundRx(rx, opts.step);
  const lens = toCylinderForm(stepped, opts.form ?? "minus");
  const sphere = signed(lens.sphere);
  const cylinder = signed(lens.cylinder);
  if (cylinder === "0.00") return sphere === "0.00" ? "plano" : `${sphere} DS`;
  const sphereText = sphere === "0.00" ? "plano" : sphere;
  return `${sphereText} ${cylinder} x ${String(lens.axis).padStart(3, "0")}`;
}

/**
 * Power of a sphero-cylinder in the meridian at `meridianDeg`:
 * F(θ) = S + C·sin²(θ − axis) (the standard meridional-power formula; it is
 * exact for the principal meridians and gives the normal-curvature power in
 * oblique meridians).
 */
export function meridianPower(rx: SphCyl, meridianDeg: number): number {
  assertSphCyl(rx, "meridianPower");
  assertFinite(meridianDeg, "Meridian", "meridianPower");
  const s = Math.sin(((meridianDeg - rx.axis) * Math.PI) / 180);
  return clean(rx.sphere + rx.cylinder * s * s);
}

function withAddedSphere(rx: SphCyl, added: number): SphCyl {
  const cylinder = noNegativeZero(rx.cylinder);
  return {
    sphere: clean(rx.sphere + added),
    cylinder,
    axis: cylinder === 0 ? 180 : normaliseAxis(rx.axis),
  };
}

function assertAdd(add: number, where: string): void {
  assertFinite(add, "Add", where);
  if (add < 0) throw new RxError(`Add ${signed(add)} must not be negative in ${where}`);
}

/**
 * Near prescription from the distance prescription and the reading addition:
 * the add is added to the sphere; cylinder and axis are unchanged.
 */
export function nearRx(distance: SphCyl, add: number): SphCyl {
  assertSphCyl(distance, "nearRx");
  assertAdd(add, "nearRx");
  return withAddedSphere(distance, add);
}

/**
 * Intermediate prescription: distance sphere plus a fraction of the add
 * (default one half, common practice for arm's-length work).
 */
export function intermediateRx(distance: SphCyl, add: number, fraction = 0.5): SphCyl {
  assertSphCyl(distance, "intermediateRx");
  assertAdd(add, "intermediateRx");
  assertFinite(fraction, "Fraction of the add", "intermediateRx");
  if (fraction < 0 || fraction > 1) {
    throw new RxError(`Fraction of the add must be between 0 and 1 (got ${fraction}) in intermediateRx`);
  }
  return withAddedSphere(distance, add * fraction);
}
