/** Reading the prescription form of the exam page into what issuePrescription takes (pure, no database). */
import { parseNumber } from "~/lib/exam/sections";
import { isLensUse, isStatement } from "~/lib/prescriptions/wording";
import type { IssueInput, LensUse, SpectacleInput } from "./prescriptions.server";

const SIDE = { right: "Right", left: "Left" } as const;

export function issueInputFrom(
  form: FormData,
): { ok: true; input: IssueInput } | { ok: false; errors: Record<string, string[]> } {
  const t = (k: string) => String(form.get(k) ?? "").trim();
  const errors: Record<string, string[]> = {};
  const kind = t("kind");
  const notes = t("notes");
  if (notes.length > 1000) errors.notes = ["Notes: at most 1000 characters."];
  if (kind === "contact_lens") {
    const eyes: Extract<IssueInput, { kind: "contact_lens" }>["eyes"] = {};
    for (const eye of ["right", "left"] as const)
      if (t(`${eye}_lens`))
        eyes[eye] = { lensId: t(`${eye}_lens`), bc: t(`${eye}_bc`), dia: t(`${eye}_dia`), power: t(`${eye}_power`) };
    if (Object.keys(errors).length) return { ok: false, errors };
    return { ok: true, input: { kind, notes, eyes } };
  }
  if (kind !== "spectacle") return { ok: false, errors: { kind: ["Choose spectacle or contact lens."] } };
  const lensUse = t("lensUse");
  if (!isLensUse(lensUse)) errors.lensUse = ["Choose what the spectacles are for."];
  const statement = t("statement") || "none";
  if (!isStatement(statement)) errors.statement = ["Choose one of the listed statements."];
  const eyes: SpectacleInput["eyes"] = {};
  for (const eye of ["right", "left"] as const) {
    const E = SIDE[eye];
    const inter = parseNumber(t(`${eye}_intAdd`), `${E} intermediate add`, 0.25, 3, { step: 0.25 });
    if (inter.error) errors[`${eye}_intAdd`] = [inter.error];
    const pd = parseNumber(t(`${eye}_pd`), `${E} distance PD (mm, monocular)`, 20, 45, { step: 0.5 });
    if (pd.error) errors[`${eye}_pd`] = [pd.error];
    const pdNear = parseNumber(t(`${eye}_pdNear`), `${E} near PD (mm, monocular)`, 18, 45, { step: 0.5 });
    if (pdNear.error) errors[`${eye}_pdNear`] = [pdNear.error];
    if (pd.value !== null && pdNear.value !== null && pdNear.value > pd.value)
      errors[`${eye}_pdNear`] = [
        `${E}: the near PD (${pdNear.value} mm) cannot be wider than the distance PD (${pd.value} mm).`,
      ];
    eyes[eye] = { intermediateAdd: inter.value, pdDistanceMm: pd.value, pdNearMm: pdNear.value };
  }
  if (Object.keys(errors).length) return { ok: false, errors };
  return {
    ok: true,
    input: {
      kind: "spectacle",
      notes,
      lensUse: lensUse as LensUse,
      statement: statement as SpectacleInput["statement"],
      referred: t("referred") === "on",
      eyes,
    },
  };
}
