/**
 * Dioptra refraction and visual-function engine — the one public entry.
 *
 * Plain TypeScript with no framework, database or Node dependency; it runs
 * unchanged on the server and in the browser. Units: dioptres (D), degrees,
 * millimetres, prism dioptres (Δ).
 */
export { RxError, type CylinderForm, type SphCyl } from "./core";
export {
  MAX_PARSED_POWER_D,
  formatRx,
  intermediateRx,
  meridianPower,
  nearRx,
  parseRx,
  roundRx,
  sphericalEquivalent,
  toCylinderForm,
  transpose,
} from "./rx";
export {
  MEANINGFUL_CHANGE_D,
  MEANINGFUL_CHANGE_RULE,
  blurStrength,
  combine,
  compareRx,
  fromPowerVector,
  isMeaningfulChange,
  toPowerVector,
  type PowerVector,
  type RxComparison,
} from "./power-vector";
export { vertexConvert } from "./vertex";
export {
  decentrationPrism,
  inducedPrism,
  prenticePrism,
  verticalImbalance,
  type DecentrationPrism,
  type Eye,
  type InducedPrism,
  type PrismBase,
  type VerticalImbalance,
} from "./prism";
export {
  ACUITY_NOTATIONS,
  ACUITY_NOTATION_LABEL,
  AcuityError,
  CHART_LOGMAR_RANGE,
  MAX_LETTERS,
  N_POINTS_PER_M,
  readAcuity,
  type AcuityNotation,
  type AcuityRead,
  type AcuityReadError,
  type AcuityReadOptions,
  LOGMAR_PER_LETTER,
  LOGMAR_RANGE,
  LOW_VISION_LOGMAR,
  fromLogMAR,
  toLogMAR,
  type LowVisionCategory,
} from "./acuity";
export {
  DISPENSING_STANDARDS,
  checkDispensing,
  checkDispensingReport,
  checkMountedPair,
  type DispensingStandard,
  type PairCheck,
  type PairEye,
  type PairReport,
  type PrismComponents,
  type DispensingCheck,
  type DispensingElement,
  type DispensingFailure,
  type DispensingReport,
  type LensRx,
  type LensType,
} from "./dispensing";
export {
  BLIND_SPOT_TOLERANCE,
  FAST_MYOPIA_PROGRESSION_D_PER_YEAR,
  NORMAL_BLIND_SPOT,
  PLATE_CRITERIA,
  checkBlindSpot,
  countedPlates,
  MYOPIA_SE_THRESHOLD_D,
  myopiaProgression,
  myopiaProgressionReport,
  screenColourVision,
  type BlindSpotMeasurement,
  type BlindSpotResult,
  type ColourVisionInput,
  type ColourVisionResult,
  type DatedRx,
  type MyopiaProgression,
  type MyopiaProgressionReport,
  type ProgressionInterval,
  type PlateCriterion,
  type PlateTest,
} from "./vision";
export {
  ACUITY_DROP_LOGMAR,
  ACUITY_REDUCED_LOGMAR,
  IOP_ASYMMETRY_MMHG,
  IOP_EMERGENCY_MMHG,
  IOP_REFER_MMHG,
  IOP_UPPER_NORMAL_MMHG,
  PROMPT_NOTE,
  referralPrompts,
  type EyeSide,
  type IopMethod,
  type PerEye,
  type ReferralCode,
  type ReferralFindings,
  type ReferralPrompt,
} from "./referral";
export { JURISDICTIONS, jurisdictionOf, type Jurisdiction, type JurisdictionRules } from "./jurisdiction";
