import {
  CartesianGrid,
  Legend,
  Line,
  LineChart,
  ResponsiveContainer,
  Scatter,
  ScatterChart,
  Tooltip,
  XAxis,
  YAxis,
  ZAxis,
} from "recharts";
import { formatDate } from "~/lib/format";
import type { Point } from "./refraction-plot";

const COLOURS = { right: "#0d5c62", left: "#b45309" } as const;

/** The two power-vector plots of the refraction history (loaded on demand by `RefractionHistory`). */
export default function RefractionCharts({
  points,
  eyes,
  jExtent,
  jTicks,
}: {
  points: Point[];
  eyes: readonly ("right" | "left")[];
  jExtent: number;
  jTicks: number[];
}) {
  const byEye = (e: "right" | "left") =>
    points.filter((p) => p.eye === e).map((p) => ({ ...p, t: Date.parse(p.date) }));
  return (
    <div className="grid gap-6 lg:grid-cols-2">
      <figure>
        <figcaption className="mb-1 text-sm font-semibold">
          Spherical equivalent M (D) over time; right eye solid line, left eye dashed
        </figcaption>
        <ResponsiveContainer width="100%" height={260}>
          <LineChart margin={{ top: 8, right: 16, bottom: 8, left: 0 }}>
            <CartesianGrid strokeDasharray="3 3" />
            <XAxis
              dataKey="t"
              type="number"
              domain={["dataMin", "dataMax"]}
              scale="time"
              tickFormatter={(t: number) => new Date(t).getUTCFullYear().toString()}
            />
            <YAxis
              dataKey="M"
              type="number"
              width={56}
              tickFormatter={(v: number) => v.toFixed(1)}
              label={{ value: "M (D)", angle: -90, position: "insideLeft" }}
            />
            <Tooltip
              labelFormatter={(t) => formatDate(new Date(Number(t)).toISOString())}
              formatter={(v) => [`${Number(v).toFixed(2)} D`, "M"]}
            />
            <Legend />
            {eyes.map((e) => (
              <Line
                key={e}
                data={byEye(e)}
                dataKey="M"
                name={e === "right" ? "Right" : "Left"}
                stroke={COLOURS[e]}
                strokeDasharray={e === "left" ? "5 3" : undefined}
                dot={{ r: 3 }}
                isAnimationActive={false}
              />
            ))}
          </LineChart>
        </ResponsiveContainer>
      </figure>
      <figure>
        <figcaption className="mb-1 text-sm font-semibold">
          Astigmatism J0 against J45 (D); right eye circles, left eye triangles
        </figcaption>
        <ResponsiveContainer width="100%" height={260}>
          <ScatterChart margin={{ top: 8, right: 16, bottom: 8, left: 0 }}>
            <CartesianGrid strokeDasharray="3 3" />
            <XAxis
              dataKey="J0"
              type="number"
              name="J0"
              domain={[-jExtent, jExtent]}
              ticks={jTicks}
              tickFormatter={(v: number) => v.toFixed(2)}
              label={{ value: "J0 (D)", position: "insideBottom", offset: -4 }}
            />
            <YAxis
              dataKey="J45"
              type="number"
              name="J45"
              width={56}
              domain={[-jExtent, jExtent]}
              ticks={jTicks}
              tickFormatter={(v: number) => v.toFixed(2)}
              label={{ value: "J45 (D)", angle: -90, position: "insideLeft" }}
            />
            <ZAxis range={[40, 40]} />
            <Tooltip />
            <Legend />
            {eyes.map((e) => (
              <Scatter
                key={e}
                data={byEye(e)}
                name={e === "right" ? "Right" : "Left"}
                fill={COLOURS[e]}
                shape={e === "left" ? "triangle" : "circle"}
                isAnimationActive={false}
              />
            ))}
          </ScatterChart>
        </ResponsiveContainer>
      </figure>
    </div>
  );
}
