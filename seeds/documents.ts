/**
 * The demo practice's attached results (fictional): visual-field printouts and fundus photographs
 * the front desk scanned onto recent exams, so the optometrist's "results to review" has work in
 * it and older exams show results already read. The files are drawn here (pdf-lib, sharp) and
 * kept in the practice's object store like any upload; every one is marked as a demo image.
 *
 * `npm start` runs this after the object-storage stand-in is up (`tsx seeds/documents.ts`). It is
 * idempotent: it adds nothing when the demo's results are already there.
 */
import { sql } from "drizzle-orm";
import { drizzle, type NodePgDatabase } from "drizzle-orm/node-postgres";
import pg from "pg";
import { PDFDocument, rgb, StandardFonts } from "pdf-lib";
import sharp from "sharp";
import * as schema from "../app/db/schema";
import { thumbnailOf } from "../app/models/patients/thumbnail.server";
import { databaseUrl } from "../app/utils/db-url";
import type { FileStorage } from "../app/utils/storage.server";
import { CASELOAD_DOMAIN } from "./caseload";
import { DEMO_USERS } from "./demo-practice";

type Tx = Parameters<Parameters<NodePgDatabase<typeof schema>["transaction"]>[0]>[0];

/** Every seeded result's file name starts with this, which is how a second run knows they exist. */
export const DEMO_FILE_PREFIX = "demo-";
const HOUR = 3_600_000;

type Exam = { id: string; patientId: string; name: string; signedAt: Date; optometristId: string };

/**
 * A one-page visual-field printout: the 24-2 grid of test points (a published test pattern, 6°
 * apart, from memory), with the points the patient missed filled in. `arcuate` marks a superior
 * arcuate defect in the right eye, the pattern a glaucoma suspect's results show.
 */
export async function fieldPrintout(patient: string, on: string, arcuate: boolean) {
  const pdf = await PDFDocument.create();
  pdf.setTitle(`Visual field printout (demo) — ${patient}`);
  const page = pdf.addPage([595, 842]);
  const font = await pdf.embedFont(StandardFonts.Helvetica);
  const bold = await pdf.embedFont(StandardFonts.HelveticaBold);
  page.drawText("Visual field printout", { x: 50, y: 790, size: 18, font: bold });
  page.drawText(`${patient} · tested ${on}`, { x: 50, y: 768, size: 11, font });
  page.drawText("Demo image for a fictional practice: not a real test result.", {
    x: 50,
    y: 750,
    size: 9,
    font,
    color: rgb(0.45, 0.1, 0.1),
  });
  for (const [eye, cx] of [
    ["Right eye", 170],
    ["Left eye", 425],
  ] as const) {
    const cy = 520;
    page.drawText(eye, { x: cx - 25, y: 700, size: 12, font: bold });
    page.drawLine({ start: { x: cx - 110, y: cy }, end: { x: cx + 110, y: cy }, thickness: 0.5 });
    page.drawLine({ start: { x: cx, y: cy - 110 }, end: { x: cx, y: cy + 110 }, thickness: 0.5 });
    // Rows of the 24-2 grid from the top: 4, 6, 8, 9, 9, 8, 6, 4 points, 3° either side of the meridians.
    const rows = [4, 6, 8, 9, 9, 8, 6, 4];
    rows.forEach((count, r) => {
      const y = 3 + 6 * (3 - r);
      const nasalStep = count === 9 ? (eye === "Right eye" ? -1 : 1) : 0;
      for (let k = 0; k < count; k++) {
        const x = -3 * (count - 1) + 6 * k + nasalStep * 3;
        const missed = arcuate && eye === "Right eye" && y > 0 && y < 20 && x > -10 && x < 22 && (x + y) % 4 === 0;
        const px = cx + x * 3.8;
        const py = cy + y * 3.8;
        if (missed) page.drawRectangle({ x: px - 3.5, y: py - 3.5, width: 7, height: 7, color: rgb(0, 0, 0) });
        else page.drawCircle({ x: px, y: py, size: 2.2, borderColor: rgb(0, 0, 0), borderWidth: 0.7 });
      }
    });
  }
  page.drawText("Filled squares: points not seen. Open circles: points seen.", { x: 50, y: 380, size: 10, font });
  page.drawText(arcuate ? "Reliability: fixation losses 1/13, false positives 3%." : "Reliability: within limits.", {
    x: 50,
    y: 362,
    size: 10,
    font,
  });
  return pdf.save();
}

/** A fundus photograph: the orange fundus, a pale disc with its cup, vessels arching from it. */
export async function fundusPhoto(rightEye: boolean, cupDisc: number) {
  const disc = rightEye ? 400 : 240;
  const vessels = [-1, 1]
    .flatMap((s) => [
      `M${disc} 240 Q ${disc + (rightEye ? -140 : 140)} ${240 + s * 120} ${rightEye ? 80 : 560} ${240 + s * 150}`,
      `M${disc} 240 Q ${disc + (rightEye ? -60 : 60)} ${240 + s * 60} ${rightEye ? 180 : 460} ${240 + s * 210}`,
    ])
    .map((d) => `<path d="${d}" stroke="#7a1208" stroke-width="5" fill="none"/>`)
    .join("");
  const svg = `<svg xmlns="http://www.w3.org/2000/svg" width="640" height="480">
    <defs><radialGradient id="f" cx="50%" cy="50%" r="50%">
      <stop offset="0%" stop-color="#e8752f"/><stop offset="80%" stop-color="#b2401a"/><stop offset="100%" stop-color="#4a1206"/>
    </radialGradient></defs>
    <rect width="640" height="480" fill="#000"/>
    <circle cx="320" cy="240" r="230" fill="url(#f)"/>
    ${vessels}
    <circle cx="${disc}" cy="240" r="34" fill="#f4d6a6"/>
    <circle cx="${disc}" cy="240" r="${Math.round(34 * cupDisc)}" fill="#fbf1df"/>
    <circle cx="${rightEye ? 220 : 420}" cy="240" r="16" fill="#8c2a10"/>
    <text x="20" y="465" font-family="sans-serif" font-size="16" fill="#fff">Demo image (fictional practice)</text>
  </svg>`;
  return new Uint8Array(await sharp(Buffer.from(svg)).png().toBuffer());
}

/**
 * Adds the demo's results: for the demo optometrist, results on the latest exams still to be
 * read, and results on earlier exams read a day after they came in; a few on colleagues' exams.
 * Returns how many it added (0 when they were already there).
 */
export async function seedDocuments(tx: Tx, store: FileStorage, now = new Date()) {
  const [{ n } = { n: 0 }] = (
    await tx.execute<{ n: number }>(
      sql`select count(*)::int as n from documents where original_name like ${DEMO_FILE_PREFIX + "%"}`,
    )
  ).rows;
  if (n > 0) return 0;
  const desk = (
    await tx.execute<{ id: string }>(
      sql`select id from users where role = 'receptionist' and active order by email limit 1`,
    )
  ).rows[0];
  const optometrist = DEMO_USERS.find((u) => u.role === "optometrist")!.email;
  if (!desk) return 0;
  // Signed exams of the caseload's adults over 40, newest first, with whose exam it was.
  const exams = (
    await tx.execute<Exam & { mine: boolean }>(sql`
      select e.id, e.patient_id as "patientId", p.first_name || ' ' || p.last_name as name,
        e.signed_at as "signedAt", e.optometrist_id as "optometristId", (u.email = ${optometrist}) as mine
      from exams e join patients p on p.id = e.patient_id join users u on u.id = e.optometrist_id
      where e.status = 'signed' and e.signed_at < ${now}::timestamptz - interval '3 hours'
        and e.signed_at > ${now}::timestamptz - interval '120 days'
        and p.email like ${"%@" + CASELOAD_DOMAIN} and p.date_of_birth < (current_date - interval '40 years')::date
      order by e.signed_at desc`)
  ).rows.map((e) => ({ ...e, signedAt: new Date(e.signedAt) }));
  const mine = exams.filter((e) => e.mine);
  const theirs = exams.filter((e) => !e.mine);
  const plan: { exam: Exam; kind: "field_printout" | "fundus_photo"; reviewed: boolean }[] = [
    ...mine.slice(0, 5).map((exam, i) => ({
      exam,
      kind: i % 2 ? ("fundus_photo" as const) : ("field_printout" as const),
      reviewed: false,
    })),
    ...mine.slice(5, 9).map((exam, i) => ({
      exam,
      kind: i % 2 ? ("field_printout" as const) : ("fundus_photo" as const),
      reviewed: true,
    })),
    ...theirs.slice(0, 3).map((exam, i) => ({
      exam,
      kind: i % 2 ? ("fundus_photo" as const) : ("field_printout" as const),
      reviewed: i === 0,
    })),
  ];
  let added = 0;
  for (const [i, { exam, kind, reviewed }] of plan.entries()) {
    const on = exam.signedAt.toISOString().slice(0, 10);
    const isField = kind === "field_printout";
    const bytes = isField
      ? await fieldPrintout(exam.name, on, i % 3 === 0)
      : await fundusPhoto(i % 2 === 0, 0.3 + (i % 4) * 0.1);
    const extension = isField ? "pdf" : "png";
    const contentType = isField ? "application/pdf" : "image/png";
    const storageKey = await store.put(bytes, { prefix: "documents", extension, contentType });
    const thumbnailKey = isField
      ? null
      : await store.put(await thumbnailOf(bytes), {
          prefix: "thumbnails",
          extension: "jpg",
          contentType: "image/jpeg",
        });
    // Results come back an hour to two days after the exam, and are read the day after.
    const createdAt = new Date(Math.min(exam.signedAt.getTime() + (1 + (i % 4) * 15) * HOUR, now.getTime() - HOUR));
    await tx.insert(schema.documents).values({
      patientId: exam.patientId,
      examId: exam.id,
      kind,
      description: isField ? "Visual fields, both eyes" : `Fundus photograph, ${i % 2 === 0 ? "right" : "left"} eye`,
      originalName: `${DEMO_FILE_PREFIX}${isField ? "fields" : "fundus"}-${on}.${extension}`,
      contentType,
      sizeBytes: bytes.length,
      storageKey,
      thumbnailKey,
      uploadedById: desk.id,
      createdAt,
      reviewedAt: reviewed ? new Date(Math.min(createdAt.getTime() + 24 * HOUR, now.getTime())) : null,
      reviewedById: reviewed ? exam.optometristId : null,
    });
    added++;
  }
  return added;
}

if (import.meta.url === `file://${process.argv[1]}`) {
  const pool = new pg.Pool({ connectionString: databaseUrl(), max: 1 });
  const db = drizzle(pool, { schema, casing: "snake_case" });
  const { storage } = await import("../app/utils/storage.server");
  db.transaction((tx) => seedDocuments(tx, storage))
    .then((added) => console.log(`[seed] demo results: ${added ? `${added} added` : "already there"}`))
    .catch((error) => {
      console.error("[seed] demo results failed:", error);
      process.exitCode = 1;
    })
    .finally(() => pool.end());
}
