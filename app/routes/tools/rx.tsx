import { useMemo, useState } from "react";
import type { Route } from "./+types/rx";
import { PageHeader } from "~/components/page-header";
import { Card } from "~/components/ui/card";
import { Select } from "~/components/ui/input";
import { Notice, StatusBadge } from "~/components/ui/notice";
import {
  blurStrength,
  checkDispensingReport,
  combine,
  compareRx,
  decentrationPrism,
  formatRx,
  fromLogMAR,
  isMeaningfulChange,
  MEANINGFUL_CHANGE_RULE,
  parseRx,
  roundRx,
  sphericalEquivalent,
  toLogMAR,
  toPowerVector,
  transpose,
  vertexConvert,
  type DispensingReport,
  type LensType,
  type PowerVector,
  type SphCyl,
} from "~/lib/optics";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { d, VectorPlot, DispensingTable } from "./rx-parts";
import { TextField, Out } from "./rx-fields";

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, STAFF_ROLES);
  return null;
}

type Result<T> = { ok: true; value: T } | { ok: false; error: string } | { ok: null };

/** Runs a computation on the typed text; an empty field is "nothing yet", not an error. */
function attempt<T>(inputs: string[], fn: () => T): Result<T> {
  if (inputs.some((t) => t.trim() === "")) return { ok: null };
  try {
    return { ok: true, value: fn() };
  } catch (error) {
    return { ok: false, error: (error as Error).message };
  }
}

function num(text: string, label: string): number {
  const t = text.trim().replace(/\u2212/g, "-");
  if (!/^[+-]?(\d+(\.\d*)?|\.\d+)$/.test(t)) throw new Error(`${label} must be a number (got "${text}")`);
  return Number(t);
}

const fmtPv = (pv: PowerVector) => `M ${d(pv.M)} D · J0 ${d(pv.J0)} D · J45 ${d(pv.J45)} D`;

function errorOf(r: Result<unknown>) {
  return r.ok === false ? r.error : undefined;
}

/** Both refractions in the J0/J45 plane (astigmatism), with M (the spherical part) listed beside. */
export default function RxTools() {
  const [rxA, setRxA] = useState("-2.25 -0.75 x 175");
  const [rxB, setRxB] = useState("-2.50 -1.00 x 170");
  const [fromMm, setFromMm] = useState("12");
  const [toMm, setToMm] = useState("0");
  const [eye, setEye] = useState<"right" | "left">("right");
  const [decIn, setDecIn] = useState("3");
  const [decUp, setDecUp] = useState("0");
  const [acuity, setAcuity] = useState("20/40");
  const [ordered, setOrdered] = useState("-2.25 -0.75 x 175");
  const [orderedAdd, setOrderedAdd] = useState("");
  const [measured, setMeasured] = useState("-2.37 -0.62 x 178");
  const [measuredAdd, setMeasuredAdd] = useState("");
  const [lensType, setLensType] = useState<LensType>("single-vision");

  const a = useMemo(() => attempt([rxA], () => parseRx(rxA)), [rxA]);
  const b = useMemo(() => attempt([rxB], () => parseRx(rxB)), [rxB]);
  const fromRes = useMemo(() => attempt([fromMm], () => num(fromMm, "From distance")), [fromMm]);
  const toRes = useMemo(() => attempt([toMm], () => num(toMm, "To distance")), [toMm]);
  const vertex = useMemo(
    () =>
      a.ok && fromRes.ok && toRes.ok
        ? attempt([rxA], () => vertexConvert(a.value, fromRes.value, toRes.value))
        : ({ ok: null } as Result<SphCyl>),
    [a, fromRes, toRes, rxA],
  );
  const decInRes = useMemo(() => attempt([decIn], () => num(decIn, "Inward decentration")), [decIn]);
  const decUpRes = useMemo(() => attempt([decUp], () => num(decUp, "Upward decentration")), [decUp]);
  const prism = useMemo(
    () =>
      a.ok && decInRes.ok && decUpRes.ok
        ? attempt([rxA], () => decentrationPrism(a.value, eye, { inMm: decInRes.value, upMm: decUpRes.value }))
        : { ok: null as null },
    [a, eye, decInRes, decUpRes, rxA],
  );
  const acuityRes = useMemo(() => attempt([acuity], () => toLogMAR(acuity)), [acuity]);
  const orderedRes = useMemo(() => attempt([ordered], () => parseRx(ordered)), [ordered]);
  const measuredRes = useMemo(() => attempt([measured], () => parseRx(measured)), [measured]);
  const orderedAddRes = useMemo(
    () =>
      orderedAdd.trim()
        ? attempt([orderedAdd], () => num(orderedAdd, "Ordered add"))
        : ({ ok: true, value: undefined } as Result<number | undefined>),
    [orderedAdd],
  );
  const measuredAddRes = useMemo(
    () =>
      measuredAdd.trim()
        ? attempt([measuredAdd], () => num(measuredAdd, "Measured add"))
        : ({ ok: true, value: undefined } as Result<number | undefined>),
    [measuredAdd],
  );
  const report = useMemo(() => {
    if (!(orderedRes.ok && measuredRes.ok && orderedAddRes.ok && measuredAddRes.ok))
      return { ok: null } as Result<DispensingReport>;
    return attempt([ordered, measured], () =>
      checkDispensingReport(
        { ...orderedRes.value, add: orderedAddRes.value },
        { ...measuredRes.value, add: measuredAddRes.value },
        { lensType },
      ),
    );
  }, [orderedRes, measuredRes, orderedAddRes, measuredAddRes, lensType, ordered, measured]);

  return (
    <>
      <PageHeader
        title="Rx calculator"
        description="Type prescriptions in the usual notation, e.g. −2.25 −0.75 × 175, +1.00 DS, pl. Results update as you type."
      />
      <div className="mb-6">
        <Notice tone="warning" title="Check before ordering or prescribing">
          These are calculations to support a licensed practitioner. Each result names its rule; check every value
          before lenses are ordered or a prescription is issued. Local law and licensed practice govern prescriptions.
        </Notice>
      </div>

      <div className="grid gap-6 lg:grid-cols-2">
        <Card title="Prescription A">
          <TextField
            label="Prescription A"
            value={rxA}
            onChange={setRxA}
            error={errorOf(a)}
            hint="Sphere, cylinder × axis. Minus or plus cylinder."
          />
          {a.ok ? (
            <dl className="mt-4">
              <Out label="Minus-cylinder form">{formatRx(a.value, { form: "minus" })}</Out>
              <Out label="Plus-cylinder form (transposed)">{formatRx(transpose(a.value), { form: "plus" })}</Out>
              <Out label="Spherical equivalent">{d(sphericalEquivalent(a.value))} D</Out>
              <Out label="Power vector">{fmtPv(toPowerVector(a.value))}</Out>
              <Out label="Blur strength">{blurStrength(toPowerVector(a.value)).toFixed(2)} D</Out>
            </dl>
          ) : null}
          <p className="mt-3 text-xs text-muted">
            Power vectors: Thibos, Wheeler &amp; Horner, Optom Vis Sci 1997;74:367–375. SE = sphere + cylinder / 2.
          </p>
        </Card>

        <Card title="Vertex distance">
          <div className="grid grid-cols-2 gap-4">
            <TextField
              label="From (mm)"
              value={fromMm}
              onChange={setFromMm}
              error={errorOf(fromRes)}
              hint="Spectacle plane, e.g. 12"
            />
            <TextField
              label="To (mm)"
              value={toMm}
              onChange={setToMm}
              error={errorOf(toRes)}
              hint="0 = corneal plane"
            />
          </div>
          {vertex.ok === false ? <p className="mt-2 text-sm font-semibold text-red-800">✕ {vertex.error}</p> : null}
          {vertex.ok ? (
            <dl className="mt-4">
              <Out label="Exact, meridian by meridian">
                {vertex.value.cylinder === 0
                  ? `${d(vertex.value.sphere, 3)} DS`
                  : `${d(vertex.value.sphere, 3)} ${d(vertex.value.cylinder, 3)} × ${String(vertex.value.axis).padStart(3, "0")}`}
              </Out>
              <Out label="Rounded to 0.25 D (ordering step)">
                {formatRx(roundRx(vertex.value, 0.25), { form: "minus" })}
              </Out>
            </dl>
          ) : null}
          <p className="mt-3 text-xs text-muted">
            F′ = F / (1 − dF), d = shift towards the eye in metres, for each principal meridian.
          </p>
        </Card>

        <Card title="Compare A with B" className="lg:col-span-2">
          <div className="grid gap-4 sm:grid-cols-2">
            <TextField
              label="Prescription B"
              value={rxB}
              onChange={setRxB}
              error={errorOf(b)}
              hint="e.g. last year's final, or autorefraction"
            />
          </div>
          {a.ok && b.ok ? (
            (() => {
              const cmp = compareRx(a.value, b.value);
              const meaningful = isMeaningfulChange(cmp);
              return (
                <div className="mt-4 grid gap-6 md:grid-cols-2">
                  <div>
                    <dl>
                      <Out label="Difference B − A">{fmtPv(cmp.delta)}</Out>
                      <Out label="Dioptric distance">{cmp.magnitude.toFixed(2)} D</Out>
                      <Out label="Sum A + B (over-refraction)">
                        {formatRx(combine(a.value, b.value), { form: "minus" })}
                      </Out>
                    </dl>
                    <div className="pt-3">
                      {meaningful ? (
                        <StatusBadge tone="warning">Meaningful change</StatusBadge>
                      ) : (
                        <StatusBadge tone="success">Within repeatability</StatusBadge>
                      )}
                      <p className="mt-2 text-xs text-muted">{MEANINGFUL_CHANGE_RULE}</p>
                    </div>
                  </div>
                  <VectorPlot a={toPowerVector(a.value)} b={toPowerVector(b.value)} />
                </div>
              );
            })()
          ) : (
            <p className="mt-4 text-sm text-muted">Enter both prescriptions to compare them.</p>
          )}
        </Card>

        <Card title="Prism from decentration">
          <p className="mb-3 text-sm text-muted">
            Uses prescription A. Prentice's rule: prism (Δ) = decentration (cm) × power in that meridian (D).
          </p>
          <div className="grid grid-cols-3 gap-4">
            <div>
              <label htmlFor="prism-eye" className="mb-1 block text-sm font-semibold">
                Eye
              </label>
              <Select id="prism-eye" value={eye} onChange={(e) => setEye(e.target.value as "right" | "left")}>
                <option value="right">Right</option>
                <option value="left">Left</option>
              </Select>
            </div>
            <TextField
              label="In (mm)"
              value={decIn}
              onChange={setDecIn}
              error={errorOf(decInRes)}
              hint="negative = out"
            />
            <TextField
              label="Up (mm)"
              value={decUp}
              onChange={setDecUp}
              error={errorOf(decUpRes)}
              hint="negative = down"
            />
          </div>
          {prism.ok === false ? <p className="mt-2 text-sm font-semibold text-red-800">✕ {prism.error}</p> : null}
          {prism.ok ? (
            <dl className="mt-4">
              <Out label="Horizontal">
                {prism.value.horizontal.prism.toFixed(2)} Δ{" "}
                {prism.value.horizontal.base ? `base ${prism.value.horizontal.base}` : ""}
              </Out>
              <Out label="Vertical">
                {prism.value.vertical.prism.toFixed(2)} Δ{" "}
                {prism.value.vertical.base ? `base ${prism.value.vertical.base}` : ""}
              </Out>
              <Out label="Resultant">{prism.value.resultant.toFixed(2)} Δ</Out>
            </dl>
          ) : null}
        </Card>

        <Card title="Visual acuity notation">
          <TextField
            label="Acuity"
            value={acuity}
            onChange={setAcuity}
            error={errorOf(acuityRes)}
            hint="20/40, 6/12, 20/25-2, 0.5 (decimal), 0.30 logMAR, CF, HM"
          />
          {acuityRes.ok ? (
            <dl className="mt-4">
              <Out label="logMAR">{acuityRes.value.toFixed(2)}</Out>
              <Out label="Snellen (feet)">{fromLogMAR(acuityRes.value, "feet")}</Out>
              <Out label="Snellen (metres)">{fromLogMAR(acuityRes.value, "metres")}</Out>
              <Out label="Decimal">{fromLogMAR(acuityRes.value, "decimal")}</Out>
            </dl>
          ) : null}
          <p className="mt-3 text-xs text-muted">
            logMAR = log10(MAR); 0.02 logMAR per letter on a 5-letter line (Bailey &amp; Lovie 1976).
          </p>
        </Card>

        <Card title="Dispensing check" className="lg:col-span-2">
          <p className="mb-3 text-sm text-muted">
            Measured spectacles against the ordered prescription, with the tolerances of ANSI Z80.1-2015.
          </p>
          <div className="grid gap-4 md:grid-cols-5">
            <div className="md:col-span-2">
              <TextField label="Ordered" value={ordered} onChange={setOrdered} error={errorOf(orderedRes)} />
            </div>
            <TextField
              label="Ordered add"
              value={orderedAdd}
              onChange={setOrderedAdd}
              error={errorOf(orderedAddRes)}
              placeholder="none"
            />
            <div className="md:col-span-2">
              <TextField
                label="Measured (lensmeter)"
                value={measured}
                onChange={setMeasured}
                error={errorOf(measuredRes)}
              />
            </div>
            <TextField
              label="Measured add"
              value={measuredAdd}
              onChange={setMeasuredAdd}
              error={errorOf(measuredAddRes)}
              placeholder="none"
            />
            <div>
              <label htmlFor="lens-type" className="mb-1 block text-sm font-semibold">
                Lens type
              </label>
              <Select id="lens-type" value={lensType} onChange={(e) => setLensType(e.target.value as LensType)}>
                <option value="single-vision">Single vision</option>
                <option value="multifocal">Multifocal</option>
                <option value="progressive">Progressive</option>
              </Select>
            </div>
          </div>
          {report.ok === false ? <p className="mt-2 text-sm font-semibold text-red-800">✕ {report.error}</p> : null}
          {report.ok ? (
            <div className="mt-4 space-y-3">
              <p aria-live="polite">
                {report.value.pass ? (
                  <StatusBadge tone="success">Passes — every element within tolerance</StatusBadge>
                ) : (
                  <StatusBadge tone="error">Fails — see the elements out of tolerance</StatusBadge>
                )}
              </p>
              <DispensingTable report={report.value} />
              <p className="text-xs text-muted">
                Tolerances of ANSI Z80.1-2015, Prescription Ophthalmics — Recommendations for Prescription Spectacle
                Lenses. Verify on the lensmeter before dispensing.
              </p>
            </div>
          ) : null}
        </Card>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Rx calculator · Dioptra" }];
