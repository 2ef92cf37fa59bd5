/**
 * The referral letter as a PDF (pdf-lib): letterhead, patient identifiers, the findings table
 * with the rule behind each flag, the exam's measured values, relevant history, the
 * optometrist's signature block and licence number, page numbers and a confidentiality footer
 * on every page. Uploads chosen by the optometrist are appended (PDF pages, JPEG/PNG images)
 * or listed when they cannot be. Text is set in the shared font chain (PdfFonts: every letter
 * of Latin, Greek and Cyrillic scripts, symbols such as ≥, Δ and − as themselves) and wrapped by
 * measured width.
 */
import { PDFDocument, rgb, type PDFPage } from "pdf-lib";
import { cleanText, PdfFonts, wrapText, type Face } from "~/utils/pdf.server";

export type LetterAttachment = { name: string; contentType: string; description: string; bytes: Buffer | null };

export type LetterInput = {
  practice: { name: string; lines: string[]; phone: string; email: string };
  /** Date of the letter as shown (practice's time zone). */
  dated: string;
  reference: string;
  recipient: { name: string; clinic: string; lines: string[]; email: string | null };
  patient: { name: string; dateOfBirth: string; sex: string; reference: string; address: string };
  urgency: { label: string; timeFrame: string; proposed?: string | null; overrideReason?: string | null };
  /** Why the exam findings call for this urgency, in plain clinical words. */
  triage?: { urgency: string; text: string }[];
  /** What an ophthalmologist needs beside the measurements. */
  clinical?: { symptoms: string; medications: string; allergies: string; gp: string; phone: string };
  reason: string;
  body: string;
  findings: { finding: string; eye: string; value: string }[];
  additionalFindings: string;
  /** The optometrist's assessment and plan from the exam. */
  assessmentPlan?: { assessment: string; plan: string } | null;
  measurements: { title: string; columns: string[]; widths: number[]; rows: string[][] }[];
  history: string;
  exam: { examinedOn: string; signedOn: string | null };
  optometrist: { name: string; licence: string; role: string };
  attachments: LetterAttachment[];
};

export const CONFIDENTIAL_FOOTER =
  "Confidential: patient information for the named recipient only. If received in error, tell the sender and delete it.";
export const CAUTION =
  "The findings and the urgency were proposed from the exam record to support the optometrist's judgement; they are not a diagnosis. Check the measurements before acting on them. Local law and licensed practice govern referrals.";

const A4 = { width: 595.28, height: 841.89 };
const MARGIN = { left: 56, right: 56, top: 50, bottom: 64 };
const INK = rgb(0.1, 0.12, 0.16);
const MUTED = rgb(0.36, 0.39, 0.45);
const ACCENT = rgb(0.06, 0.36, 0.42);
const LINE = rgb(0.8, 0.82, 0.86);

class Writer {
  page!: PDFPage;
  y = 0;

  constructor(
    readonly doc: PDFDocument,
    readonly fonts: PdfFonts,
    private readonly runningHead: string,
  ) {
    this.newPage(true);
  }

  get width() {
    return A4.width - MARGIN.left - MARGIN.right;
  }

  clean(text: string): string {
    return cleanText(text);
  }

  /** One line of text at (x, y) in the font chain. */
  draw(
    page: PDFPage,
    text: string,
    opts: { x: number; y: number; size: number; face?: Face; color?: ReturnType<typeof rgb> },
  ) {
    return this.fonts.draw(page, text, opts);
  }

  newPage(first = false) {
    this.page = this.doc.addPage([A4.width, A4.height]);
    this.y = A4.height - MARGIN.top;
    if (!first) {
      for (const line of this.wrap(this.runningHead, "regular", 8.5, this.width)) {
        this.draw(this.page, line, { x: MARGIN.left, y: this.y, size: 8.5, color: MUTED });
        this.y -= 11;
      }
      this.y -= 11;
    }
  }

  ensure(height: number) {
    if (this.y - height < MARGIN.bottom) this.newPage();
  }

  wrap(text: string, face: Face, size: number, width: number): string[] {
    return wrapText(text, width, (line) => this.fonts.width(line, size, face));
  }

  text(
    text: string,
    opts: { size?: number; bold?: boolean; color?: ReturnType<typeof rgb>; indent?: number; gap?: number } = {},
  ) {
    const size = opts.size ?? 10;
    const face: Face = opts.bold ? "bold" : "regular";
    const indent = opts.indent ?? 0;
    const leading = size * 1.3;
    for (const line of this.wrap(text, face, size, this.width - indent)) {
      this.ensure(leading);
      this.draw(this.page, line, { x: MARGIN.left + indent, y: this.y - size, size, face, color: opts.color ?? INK });
      this.y -= leading;
    }
    this.y -= opts.gap ?? 4;
  }

  heading(text: string) {
    this.ensure(40);
    this.y -= 5;
    this.text(text, { size: 11.5, bold: true, color: ACCENT, gap: 1 });
  }

  rule() {
    this.page.drawLine({
      start: { x: MARGIN.left, y: this.y },
      end: { x: A4.width - MARGIN.right, y: this.y },
      thickness: 0.6,
      color: LINE,
    });
    this.y -= 8;
  }

  /** A table whose rows wrap inside their cells and never split across pages; the header repeats. */
  table(columns: string[], widths: number[], rows: string[][]) {
    const size = 8.5;
    const leading = size * 1.25;
    const pad = 2.5;
    const total = widths.reduce((a, b) => a + b, 0);
    const cols = widths.map((w) => (w / total) * this.width);
    const drawRow = (cells: string[], header: boolean) => {
      const face: Face = header ? "bold" : "regular";
      const wrapped = cells.map((c, i) => this.wrap(c, face, size, cols[i]! - pad * 2));
      const height = Math.max(...wrapped.map((w) => w.length)) * leading + pad * 2;
      return { wrapped, height, face };
    };
    const head = drawRow(columns, true);
    const paint = (row: ReturnType<typeof drawRow>, header: boolean) => {
      if (header)
        this.page.drawRectangle({
          x: MARGIN.left,
          y: this.y - row.height,
          width: this.width,
          height: row.height,
          color: rgb(0.93, 0.96, 0.96),
        });
      let x = MARGIN.left;
      row.wrapped.forEach((lines, i) => {
        lines.forEach((line, j) =>
          this.draw(this.page, line, {
            x: x + pad,
            y: this.y - pad - size - j * leading,
            size,
            face: row.face,
            color: INK,
          }),
        );
        x += cols[i]!;
      });
      this.y -= row.height;
      this.page.drawLine({
        start: { x: MARGIN.left, y: this.y },
        end: { x: A4.width - MARGIN.right, y: this.y },
        thickness: 0.5,
        color: LINE,
      });
    };
    this.ensure(head.height + leading * 2 + pad * 2);
    paint(head, true);
    for (const cells of rows) {
      const row = drawRow(cells, false);
      if (this.y - row.height < MARGIN.bottom) {
        this.newPage();
        paint(head, true);
      }
      paint(row, false);
    }
    this.y -= 5;
  }
}

/** Builds the letter; returns the PDF bytes. */
export async function buildLetterPdf(input: LetterInput): Promise<Uint8Array> {
  const doc = await PDFDocument.create();
  const fonts = await PdfFonts.create(doc);
  doc.setTitle(`Referral: ${input.patient.name}`);
  doc.setAuthor(input.optometrist.name);
  doc.setSubject(`Referral letter ${input.reference}`);

  const w = new Writer(
    doc,
    fonts,
    `${input.practice.name} · Referral ${input.reference} · ${input.patient.name}, born ${input.patient.dateOfBirth}`,
  );

  // Letterhead.
  w.text(input.practice.name, { size: 18, bold: true, color: ACCENT, gap: 0 });
  w.text(
    [
      ...input.practice.lines,
      [input.practice.phone && `Tel ${input.practice.phone}`, input.practice.email].filter(Boolean).join(" · "),
    ]
      .filter(Boolean)
      .join("\n"),
    { size: 9, color: MUTED, gap: 6 },
  );
  w.rule();

  // Addressee and date.
  w.text([input.recipient.name, input.recipient.clinic, ...input.recipient.lines].filter(Boolean).join("\n"), {
    size: 10.5,
    gap: 8,
  });
  w.text(`${input.dated}\nOur reference: ${input.reference}`, { size: 10, color: MUTED, gap: 10 });

  w.text(`Referral — ${input.urgency.label} (${input.urgency.timeFrame})`, { size: 14, bold: true, gap: 4 });
  w.table(
    ["Patient", "Date of birth", "Sex", "Practice reference"],
    [3, 2, 1.3, 2.4],
    [[input.patient.name, input.patient.dateOfBirth, input.patient.sex, input.patient.reference]],
  );
  if (input.patient.address) w.text(`Address: ${input.patient.address}`, { size: 9.5, color: MUTED, gap: 2 });
  if (input.clinical)
    w.text(`Telephone: ${input.clinical.phone}\nGP: ${input.clinical.gp}`, { size: 9.5, color: MUTED, gap: 6 });
  w.text(`Examined on ${input.exam.examinedOn}${input.exam.signedOn ? `; exam signed ${input.exam.signedOn}` : ""}.`, {
    size: 9.5,
    color: MUTED,
    gap: 8,
  });

  w.heading("Reason for referral");
  w.text(input.reason);
  if (input.triage?.length || input.urgency.proposed) {
    w.y -= 4;
    w.text(`Urgency: ${input.urgency.label} (${input.urgency.timeFrame}).`, { bold: true, gap: 2 });
    if (input.triage?.length) {
      w.text(
        `The exam findings call for ${input.urgency.proposed ? input.urgency.proposed.toLowerCase() : "referral"} because of:`,
        { gap: 2 },
      );
      for (const t of input.triage) w.text(`• ${t.text} (${t.urgency.toLowerCase()})`, { size: 10, gap: 1 });
    }
    if (input.urgency.overrideReason && input.urgency.proposed) {
      w.y -= 3;
      w.text(
        `The optometrist chose ${input.urgency.label.toLowerCase()} rather than ${input.urgency.proposed.toLowerCase()}: ${input.urgency.overrideReason}`,
        { gap: 4 },
      );
    }
  }
  if (input.body.trim()) {
    w.y -= 4;
    w.text(input.body);
  }

  w.heading("Findings");
  if (input.findings.length)
    w.table(
      ["Finding", "Eye", "Measured"],
      [5, 1, 2.4],
      input.findings.map((f) => [f.finding, f.eye, f.value]),
    );
  if (input.additionalFindings.trim()) w.text(input.additionalFindings);
  w.text(CAUTION, { size: 8.5, color: MUTED, gap: 6 });

  const ap = input.assessmentPlan;
  if (ap && (ap.assessment.trim() || ap.plan.trim())) {
    w.heading("Assessment and plan");
    if (ap.assessment.trim()) w.text(`Assessment: ${ap.assessment.trim()}`, { gap: 3 });
    if (ap.plan.trim()) w.text(`Plan: ${ap.plan.trim()}`);
  }

  if (input.measurements.length) {
    w.heading("Measurements at this exam");
    for (const m of input.measurements) {
      // Keep a table's title with its header and first rows.
      w.ensure(70);
      w.text(m.title, { size: 9.5, bold: true, gap: 1 });
      w.table(m.columns, m.widths, m.rows);
    }
  }

  if (input.clinical) {
    w.heading("Symptoms, medications and allergies");
    if (input.clinical.symptoms) w.text(input.clinical.symptoms, { gap: 3 });
    w.text(`Medications: ${input.clinical.medications}`, { gap: 2 });
    w.text(`Allergies: ${input.clinical.allergies}`);
  }

  if (input.history.trim()) {
    w.heading("Relevant history");
    w.text(input.history);
  }

  if (input.attachments.length) {
    w.heading("Enclosures");
    for (const a of input.attachments)
      w.text(
        `• ${a.name}${a.description ? ` — ${a.description}` : ""}${a.bytes ? " (appended)" : " (not appended: see the practice's records)"}`,
        { size: 10 },
      );
  }

  // Signature block.
  w.ensure(84);
  w.y -= 8;
  w.text("Yours sincerely,", { gap: 22 });
  w.page.drawLine({ start: { x: 56, y: w.y + 8 }, end: { x: 256, y: w.y + 8 }, thickness: 0.6, color: MUTED });
  w.text(input.optometrist.name, { bold: true, gap: 0 });
  w.text(
    `${input.optometrist.role}${input.optometrist.licence ? ` · Registration no. ${input.optometrist.licence}` : ""}`,
    { size: 9.5, gap: 0 },
  );
  w.text(input.practice.name, { size: 9.5, color: MUTED });

  // Enclosures appended after the letter.
  for (const a of input.attachments) {
    if (!a.bytes) continue;
    try {
      if (a.contentType === "application/pdf") {
        const src = await PDFDocument.load(a.bytes, { ignoreEncryption: false });
        const pages = await doc.copyPages(src, src.getPageIndices());
        for (const p of pages) doc.addPage(p);
      } else if (a.contentType === "image/jpeg" || a.contentType === "image/png") {
        const image = a.contentType === "image/png" ? await doc.embedPng(a.bytes) : await doc.embedJpg(a.bytes);
        const page = doc.addPage([A4.width, A4.height]);
        w.draw(page, w.wrap(`Enclosure: ${a.name}`, "bold", 10, A4.width - MARGIN.left - MARGIN.right)[0] ?? "", {
          x: MARGIN.left,
          y: A4.height - MARGIN.top,
          size: 10,
          face: "bold",
          color: INK,
        });
        const maxW = A4.width - MARGIN.left - MARGIN.right;
        const maxH = A4.height - MARGIN.top - MARGIN.bottom - 30;
        const scale = Math.min(maxW / image.width, maxH / image.height, 1);
        page.drawImage(image, {
          x: MARGIN.left,
          y: A4.height - MARGIN.top - 20 - image.height * scale,
          width: image.width * scale,
          height: image.height * scale,
        });
      }
    } catch {
      // An enclosure that cannot be read is listed above and not appended.
    }
  }

  // Page numbers and the confidentiality footer on every page.
  const pages = doc.getPages();
  pages.forEach((page, i) => {
    const { width } = page.getSize();
    const label = `Page ${i + 1} of ${pages.length}`;
    page.drawLine({
      start: { x: MARGIN.left, y: 46 },
      end: { x: width - MARGIN.right, y: 46 },
      thickness: 0.5,
      color: LINE,
    });
    w.wrap(CONFIDENTIAL_FOOTER, "regular", 7.5, width - MARGIN.left - MARGIN.right - 70).forEach((line, j) =>
      w.draw(page, line, { x: MARGIN.left, y: 34 - j * 9, size: 7.5, color: MUTED }),
    );
    w.draw(page, label, { x: width - MARGIN.right - fonts.width(label, 8.5), y: 34, size: 8.5, color: MUTED });
  });

  return doc.save();
}
