/**
 * Alarm-fatigue measure: the share of the demo caseload's signed exams that raise a referral
 * prompt, and the share that raise only a request to repeat a measurement. It builds a fresh
 * database from the migrations and the demo seed (DIOPTRA_DB_NAME, default dioptra_measure),
 * then runs the engine's prompts over every signed exam against the patient's previous exam.
 *
 *   DIOPTRA_PG_PORT=… tsx tests/bench/referral-prompts.bench.ts
 *   BENCH_SKIP_SEED=1 … reuses an already seeded database.
 */
import { execFileSync } from "node:child_process";
import pg from "pg";
import { runMigrations } from "../../app/ops/migrate";
import { referralPrompts, type IopMethod, type ReferralFindings } from "../../app/lib/optics";
import { databaseUrl } from "../../app/utils/db-url";
import { seed } from "../../seeds/seed";

const DB = process.env.DIOPTRA_DB_NAME ?? "dioptra_measure";
const url = databaseUrl(DB);
if (!process.env.BENCH_SKIP_SEED) {
  execFileSync("bash", [new URL("../../app/ops/db.sh", import.meta.url).pathname, "recreate", DB], {
    stdio: "inherit",
  });
  await runMigrations(url);
  await seed(url);
}

type Row = Record<string, unknown> & { exam_id: string; eye: string };
const pool = new pg.Pool({ connectionString: url, max: 2 });
const exams = (
  await pool.query<{ id: string; patient_id: string }>(
    `select id, patient_id from exams where status = 'signed' order by patient_id, examined_at`,
  )
).rows;
async function byExam(table: string) {
  const map = new Map<string, Row[]>();
  for (const r of (await pool.query<Row>(`select * from ${table}`)).rows)
    map.set(r.exam_id, [...(map.get(r.exam_id) ?? []), r]);
  return map;
}
const [iop, fields, colour, acuity] = await Promise.all([
  byExam("exam_iop"),
  byExam("exam_visual_fields"),
  byExam("exam_colour_vision"),
  byExam("exam_acuity"),
]);

const METHOD: Record<string, IopMethod> = {
  goldmann: "applanation",
  handheld_applanation: "applanation",
  non_contact: "non-contact",
  rebound: "rebound",
  other: "other",
};
const cv = (r: unknown) =>
  (r === "normal" ? "normal" : r === "inconclusive" ? "inconclusive" : "deficiency suspected") as
    "normal" | "inconclusive" | "deficiency suspected";
const best = (rows: Row[]) =>
  rows.filter((a) => a.distance === "distance" && a.correction === "best" && a.eye !== "both" && a.log_mar !== null);

let refer = 0;
let repeatOnly = 0;
let iopRefer = 0;
let refused = 0;
const perCode = new Map<string, number>();
let previous: { id: string; patient_id: string } | null = null;
for (const exam of exams) {
  const before = previous && previous.patient_id === exam.patient_id ? previous : null;
  previous = exam;
  const f: ReferralFindings = {};
  const readings = iop.get(exam.id) ?? [];
  if (readings.length) {
    f.iop = {};
    for (const eye of ["right", "left"] as const) {
      const mine = readings.filter((r) => r.eye === eye);
      if (mine.length)
        f.iop[eye] = { readings: mine.map((r) => Number(r.mm_hg)), method: METHOD[String(mine[0]!.method)] };
    }
  }
  const fl = fields.get(exam.id) ?? [];
  const spots = fl.filter(
    (r) =>
      r.blind_spot_x_deg !== null &&
      r.blind_spot_y_deg !== null &&
      r.blind_spot_width_deg !== null &&
      r.blind_spot_height_deg !== null,
  );
  if (spots.length)
    f.blindSpot = Object.fromEntries(
      spots.map((r) => [
        r.eye,
        {
          centreXDeg: Number(r.blind_spot_x_deg),
          centreYDeg: Number(r.blind_spot_y_deg),
          widthDeg: Number(r.blind_spot_width_deg),
          heightDeg: Number(r.blind_spot_height_deg),
        },
      ]),
    );
  if (fl.length)
    f.fieldDefect = Object.fromEntries(
      fl.map((r) => [r.eye, { present: r.defect_present === true, description: String(r.defects ?? "") }]),
    );
  const col = colour.get(exam.id) ?? [];
  if (col.length) {
    f.colourVision = Object.fromEntries(
      col.map((r) => {
        const p = before ? (colour.get(before.id) ?? []).find((x) => x.eye === r.eye) : undefined;
        return [r.eye, { result: cv(r.result), changedFromPrevious: p ? cv(p.result) !== cv(r.result) : undefined }];
      }),
    );
  }
  const now = best(acuity.get(exam.id) ?? []);
  if (now.length)
    f.acuity = Object.fromEntries(
      now.map((a) => [
        a.eye,
        {
          bestCorrected: Number(a.log_mar),
          previous: before
            ? (best(acuity.get(before.id) ?? []).find((p) => p.eye === a.eye)?.log_mar as number | undefined)
            : undefined,
        },
      ]),
    );
  try {
    const prompts = referralPrompts(f);
    for (const p of prompts) perCode.set(p.code, (perCode.get(p.code) ?? 0) + 1);
    if (prompts.some((p) => p.action === "consider referral")) refer++;
    else if (prompts.length) repeatOnly++;
    if (prompts.some((p) => p.action === "consider referral" && p.code.startsWith("IOP"))) iopRefer++;
  } catch {
    refused++;
  }
}
await pool.end();

const share = (n: number) => `${n} (${((100 * n) / Math.max(1, exams.length)).toFixed(1)}%)`;
console.log(`signed exams: ${exams.length}`);
console.log(`exams raising a referral prompt: ${share(refer)} (IOP: ${share(iopRefer)})`);
console.log(`exams raising only a request to repeat a measurement: ${share(repeatOnly)}`);
console.log(`exams raising any prompt: ${share(refer + repeatOnly)}`);
console.log(`prompts by kind: ${[...perCode].map(([c, n]) => `${c} ${n}`).join(", ") || "none"}`);
console.log(`exams whose findings the engine refused: ${refused}`);
