import { createColumnHelper } from "@tanstack/react-table";
import { DataTable } from "~/components/data-table";
import { StatusBadge } from "~/components/ui/notice";
import { type DispensingReport, type PowerVector } from "~/lib/optics";

/** A signed power with a true minus sign. */
export const d = (v: number, digits = 2) => `${v >= 0 ? "+" : "−"}${Math.abs(v).toFixed(digits)}`;

export function VectorPlot({ a, b }: { a: PowerVector; b: PowerVector }) {
  const extent = Math.max(
    1,
    Math.ceil(Math.max(Math.abs(a.J0), Math.abs(a.J45), Math.abs(b.J0), Math.abs(b.J45)) * 2) / 2,
  );
  const size = 200;
  const scale = (v: number) => size / 2 + (v / extent) * (size / 2 - 16);
  const pt = (pv: PowerVector) => ({ x: scale(pv.J0), y: scale(-pv.J45) });
  const pa = pt(a);
  const pb = pt(b);
  return (
    <figure className="flex flex-wrap items-center gap-6">
      <svg
        viewBox={`0 0 ${size} ${size}`}
        className="size-52 rounded border border-line bg-white"
        role="img"
        aria-label={`J0/J45 plot: A at J0 ${a.J0.toFixed(2)}, J45 ${a.J45.toFixed(2)}; B at J0 ${b.J0.toFixed(2)}, J45 ${b.J45.toFixed(2)}`}
      >
        <line x1={size / 2} y1={8} x2={size / 2} y2={size - 8} stroke="#9aa7b3" />
        <line x1={8} y1={size / 2} x2={size - 8} y2={size / 2} stroke="#9aa7b3" />
        <text x={size - 10} y={size / 2 - 6} fontSize="10" textAnchor="end" fill="#4a5866">
          J0 +{extent}
        </text>
        <text x={size / 2 + 6} y={16} fontSize="10" fill="#4a5866">
          J45 +{extent}
        </text>
        <line x1={pa.x} y1={pa.y} x2={pb.x} y2={pb.y} stroke="#4a5866" strokeDasharray="3 3" />
        <circle cx={pa.x} cy={pa.y} r={6} fill="#0d5c62" />
        <text x={pa.x + 8} y={pa.y - 8} fontSize="12" fontWeight="700" fill="#0d5c62">
          A
        </text>
        <rect x={pb.x - 6} y={pb.y - 6} width={12} height={12} fill="#b45309" />
        <text x={pb.x + 8} y={pb.y + 14} fontSize="12" fontWeight="700" fill="#b45309">
          B
        </text>
      </svg>
      <figcaption className="text-sm">
        <p className="font-semibold">Spherical part (M)</p>
        <p>
          <span aria-hidden="true">● </span>A: {d(a.M)} D
        </p>
        <p>
          <span aria-hidden="true">■ </span>B: {d(b.M)} D
        </p>
        <p className="mt-2 max-w-xs text-muted">
          A is a circle, B a square; the dashed line is the astigmatic part of the difference.
        </p>
      </figcaption>
    </figure>
  );
}

type Check = DispensingReport["checks"][number];
const checkCol = createColumnHelper<Check>();
const checkColumns = [
  checkCol.accessor("element", { header: "Element", meta: { className: "font-semibold capitalize" } }),
  checkCol.accessor("ordered", {
    header: "Ordered",
    meta: { className: "font-mono" },
    cell: ({ row: { original: c } }) => (c.element === "axis" ? `${c.ordered}°` : d(c.ordered)),
  }),
  checkCol.accessor("measured", {
    header: "Measured",
    meta: { className: "font-mono" },
    cell: ({ row: { original: c } }) => (c.element === "axis" ? `${c.measured}°` : d(c.measured)),
  }),
  checkCol.accessor("tolerance", {
    header: "Tolerance",
    meta: { className: "font-mono" },
    cell: ({ row: { original: c } }) =>
      c.tolerance === null ? "—" : c.element === "axis" ? `±${c.tolerance}°` : `±${c.tolerance.toFixed(2)} D`,
  }),
  checkCol.display({
    id: "result",
    header: "Result",
    cell: ({ row: { original: c } }) =>
      !c.applicable ? (
        <StatusBadge tone="info">Not applicable</StatusBadge>
      ) : c.pass ? (
        <StatusBadge tone="success">Within tolerance</StatusBadge>
      ) : (
        <StatusBadge tone="error">Out of tolerance</StatusBadge>
      ),
  }),
];

export function DispensingTable({ report }: { report: DispensingReport }) {
  return (
    <DataTable
      data={report.checks}
      columns={checkColumns}
      getRowId={(c) => c.element}
      caption="Dispensing check, element by element"
      empty="Nothing was checked."
    />
  );
}
