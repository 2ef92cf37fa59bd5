/**
 * Throughput and bundle-size benchmark for the optics engine.
 *
 *   tsx tests/bench/optics.bench.ts            # 1,000,000 prescriptions
 *   BENCH_N=20000 tsx tests/bench/optics.bench.ts   # quick smoke run
 *
 * Prescriptions come from a seeded PRNG, so every run measures the same
 * inputs. Each operation runs on the main thread only (one core).
 */
import { fileURLToPath } from "node:url";
import { gzipSync } from "node:zlib";
import { build } from "esbuild";
import { combine, formatRx, parseRx, toPowerVector, vertexConvert, type SphCyl } from "../../app/lib/optics/index";

const N = Number(process.env.BENCH_N ?? 1_000_000);
if (!Number.isInteger(N) || N < 1) throw new Error(`BENCH_N must be a positive integer (got ${process.env.BENCH_N})`);

const TARGET_POWER_VECTOR_PER_S = 1_000_000;
const TARGET_GZIP_BYTES = 10_000;

/** mulberry32: small, fast, deterministic 32-bit PRNG. */
function mulberry32(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

function prescriptions(count: number, seed: number): SphCyl[] {
  const random = mulberry32(seed);
  const quarter = (min: number, max: number) => (Math.floor(random() * ((max - min) * 4 + 1)) + min * 4) / 4 + 0;
  const list: SphCyl[] = new Array(count);
  for (let i = 0; i < count; i++) {
    const cylinder = quarter(-4, 0);
    list[i] = {
      sphere: quarter(-12, 8),
      cylinder,
      axis: cylinder === 0 ? 180 : 1 + Math.floor(random() * 180),
    };
  }
  return list;
}

type Result = { name: string; perSecond: number; checksum: number };

/** Times `op` over every input after a short warm-up; the checksum keeps the work observable. */
function measure<T>(name: string, inputs: T[], op: (input: T, index: number) => number): Result {
  const warm = Math.min(inputs.length, 20_000);
  for (let i = 0; i < warm; i++) op(inputs[i] as T, i);
  let checksum = 0;
  const start = performance.now();
  for (let i = 0; i < inputs.length; i++) checksum += op(inputs[i] as T, i);
  const seconds = (performance.now() - start) / 1000;
  return { name, perSecond: inputs.length / seconds, checksum };
}

async function bundleSize(): Promise<{ minified: number; gzipped: number }> {
  const entry = fileURLToPath(new URL("../../app/lib/optics/index.ts", import.meta.url));
  const result = await build({
    entryPoints: [entry],
    bundle: true,
    minify: true,
    format: "esm",
    platform: "browser",
    target: "es2022",
    write: false,
    logLevel: "silent",
  });
  const code = result.outputFiles[0]?.contents;
  if (!code) throw new Error("esbuild produced no output");
  return { minified: code.byteLength, gzipped: gzipSync(code, { level: 9 }).byteLength };
}

const fmt = (n: number) => Math.round(n).toLocaleString("en-US");

const rxs = prescriptions(N, 20240601);
const others = prescriptions(N, 19970601);
const texts = rxs.map((rx) => formatRx(rx));

const results = [
  measure("parseRx (formatted strings)", texts, (t) => parseRx(t).sphere),
  measure("toPowerVector", rxs, (rx) => toPowerVector(rx).J0),
  measure("vertexConvert (12 mm → 0 mm)", rxs, (rx) => vertexConvert(rx, 12, 0).sphere),
  measure("combine", rxs, (rx, i) => combine(rx, others[i] as SphCyl).cylinder),
];
const size = await bundleSize();

const rows: [string, string, string, string][] = [["Measure", "Result", "Target", "Status"]];
for (const r of results) {
  const isTarget = r.name === "toPowerVector";
  rows.push([
    r.name,
    `${fmt(r.perSecond)} /s`,
    isTarget ? `> ${fmt(TARGET_POWER_VECTOR_PER_S)} /s` : "—",
    isTarget ? (r.perSecond > TARGET_POWER_VECTOR_PER_S ? "met" : "MISSED") : "",
  ]);
}
rows.push(["bundle, minified ESM", `${fmt(size.minified)} B`, "—", ""]);
rows.push([
  "bundle, gzipped",
  `${fmt(size.gzipped)} B`,
  `< ${fmt(TARGET_GZIP_BYTES)} B`,
  size.gzipped < TARGET_GZIP_BYTES ? "met" : "MISSED",
]);

const widths = rows[0]?.map((_, col) => Math.max(...rows.map((row) => row[col]?.length ?? 0))) ?? [];
const line = (row: string[]) => `| ${row.map((cell, col) => cell.padEnd(widths[col] ?? 0)).join(" | ")} |`;
console.log(`Optics engine benchmark — ${fmt(N)} seeded prescriptions, one core (Node ${process.version})`);
console.log(line(rows[0] ?? []));
console.log(`|${widths.map((w) => "-".repeat(w + 2)).join("|")}|`);
for (const row of rows.slice(1)) console.log(line(row));
console.log(`checksum ${results.reduce((sum, r) => sum + r.checksum, 0).toFixed(3)}`);
