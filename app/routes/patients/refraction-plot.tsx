import { createColumnHelper } from "@tanstack/react-table";
import { lazy, Suspense, useState } from "react";
import { DataTable } from "~/components/data-table";
import { Card } from "~/components/ui/card";
import { useHydrated } from "~/components/use-hydrated";
import { StatusBadge } from "~/components/ui/notice";
import { formatDate } from "~/lib/format";

export type Point = {
  examId: string;
  date: string;
  kind: string;
  eye: "right" | "left";
  M: number;
  J0: number;
  J45: number;
  sphere: number;
  cylinder: number;
  axis: number;
};
type Interval = { ratePerYear: number; atOrBeyondThreshold: boolean; label: string; warnings: string[] };
type Progression = Partial<
  Record<
    "right" | "left",
    { latestSE: number; recent: Interval; overall: Interval | null; thresholdMeaning: string; myopiaDefinition: string }
  >
> | null;

// The plots (recharts, the largest library of the chart) load after the page is interactive: they
// are drawn only in the browser, and the table below carries the same data without them.
const RefractionCharts = lazy(() => import("./refraction-charts"));

const vectorCol = createColumnHelper<Point>();
const vector = (key: "M" | "J0" | "J45") =>
  vectorCol.accessor(key, { header: key, meta: { className: "font-mono" }, cell: (c) => c.getValue().toFixed(2) });
const vectorColumns = [
  vectorCol.accessor("date", { header: "Date", cell: (c) => formatDate(c.getValue()) }),
  vectorCol.accessor("kind", { header: "Kind" }),
  vectorCol.accessor("eye", { header: "Eye" }),
  vector("M"),
  vector("J0"),
  vector("J45"),
];

/** Refractions over time in power-vector space (M against date; J0/J45 scatter), with a table of the same data. */
export function RefractionHistory({ points, progression }: { points: Point[]; progression: Progression }) {
  const [eye, setEye] = useState<"both" | "right" | "left">("both");
  const [kind, setKind] = useState<"final" | "all">("final");
  const mounted = useHydrated();
  const shown = points.filter((p) => (kind === "all" || p.kind === "final") && (eye === "both" || p.eye === eye));
  // The astigmatism plane is drawn square and centred on zero (no astigmatism), at least ±0.50 D,
  // in 0.25 D steps, so a cluster of equal values does not blow up into a meaningless scale.
  const jExtent = Math.max(
    0.5,
    Math.ceil(Math.max(0, ...shown.flatMap((p) => [Math.abs(p.J0), Math.abs(p.J45)])) / 0.25) * 0.25,
  );
  const jStep = jExtent > 2 ? 1 : jExtent > 1 ? 0.5 : 0.25;
  const jTicks = Array.from({ length: Math.round((2 * jExtent) / jStep) + 1 }, (_, i) => -jExtent + i * jStep);
  const eyes = eye === "both" ? (["right", "left"] as const) : ([eye] as const);
  return (
    <Card title="Refraction history (power vectors)">
      <div className="mb-4 flex flex-wrap gap-6 text-sm">
        <fieldset className="flex gap-3">
          <legend className="mr-2 font-semibold">Eye</legend>
          {(["both", "right", "left"] as const).map((e) => (
            <label key={e} className="flex items-center gap-1">
              <input type="radio" name="plot-eye" checked={eye === e} onChange={() => setEye(e)} />{" "}
              {e === "both" ? "Both" : e === "right" ? "Right" : "Left"}
            </label>
          ))}
        </fieldset>
        <fieldset className="flex gap-3">
          <legend className="mr-2 font-semibold">Refractions</legend>
          <label className="flex items-center gap-1">
            <input type="radio" name="plot-kind" checked={kind === "final"} onChange={() => setKind("final")} /> Final
            only
          </label>
          <label className="flex items-center gap-1">
            <input type="radio" name="plot-kind" checked={kind === "all"} onChange={() => setKind("all")} /> All kinds
          </label>
        </fieldset>
      </div>
      {progression ? (
        <div className="mb-4 space-y-2 text-sm" data-testid="myopia-progression">
          <p className="font-semibold">Myopia progression (child, myopic eyes only)</p>
          {(["right", "left"] as const).map((e) => {
            const p = progression[e];
            if (!p) return null;
            return (
              <div key={e} data-testid={`myopia-progression-${e}`}>
                <p className="font-medium">
                  {e === "right" ? "Right eye" : "Left eye"} (spherical equivalent now {p.latestSE.toFixed(2)} D)
                </p>
                <ul className="ml-4 list-disc">
                  {[p.recent, p.overall].map((i, k) =>
                    i ? (
                      <li key={k}>
                        {i.atOrBeyondThreshold ? (
                          <StatusBadge tone="warning">At or beyond 0.50 D per year</StatusBadge>
                        ) : (
                          <StatusBadge tone="success">Below 0.50 D per year</StatusBadge>
                        )}{" "}
                        {i.label}
                        {i.warnings.length ? <span className="text-muted"> ({i.warnings.join("; ")})</span> : null}
                      </li>
                    ) : null,
                  )}
                </ul>
              </div>
            );
          })}
          <p className="text-xs text-muted">
            {(progression.right ?? progression.left)!.thresholdMeaning}{" "}
            {(progression.right ?? progression.left)!.myopiaDefinition}. Check before changing management.
          </p>
        </div>
      ) : null}
      {shown.length === 0 ? (
        <p className="text-muted">No refractions recorded yet.</p>
      ) : mounted ? (
        <Suspense fallback={<p className="text-sm text-muted">Drawing the plots…</p>}>
          <RefractionCharts points={shown} eyes={eyes} jExtent={jExtent} jTicks={jTicks} />
        </Suspense>
      ) : null}
      {shown.length ? (
        <details className="mt-4 text-sm">
          <summary className="cursor-pointer font-semibold">The same data as a table</summary>
          <DataTable
            data={shown}
            columns={vectorColumns}
            caption="Refractions and their power vectors"
            empty="No refractions to show."
            className="mt-2"
          />
          <p className="mt-1 text-xs text-muted">
            Power vectors M, J0, J45: Thibos, Wheeler &amp; Horner, Optom Vis Sci 1997;74:367–375.
          </p>
        </details>
      ) : null}
    </Card>
  );
}
