/**
 * The referral letter as a PDF (pdf-lib): letterhead, patient identifiers, the findings table
 * with the rule behind each flag, the exam's measured values, relevant history, the
 * optometrist's signature block and licence number, page numbers and a confidentiality footer
 * on every page. Uploads chosen by the optometrist are appended (PDF pages, JPEG/PNG images)
 * or listed when they cannot be. Nunito Sans is embedded (the .woff, subset).
 */
import { readFile } from "node:fs/promises";
import { join } from "node:path";
import fontkit from "@pdf-lib/fontkit";
import { PDFDocument, rgb, type PDFFont, type PDFPage } from "pdf-lib";

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
  measurements: { title: string; columns: string[]; widths: number[]; rows: string[][] }[];
  history: string;
  exam: { examinedOn: string; signedOn: string | null };
  optometrist: { name: string; licence: string; role: string };
  attachments: LetterAttachment[];
};

export const CONFIDENTIAL_FOOTER = "Confidential: patient information for the named recipient only. If received in error, tell the sender and delete it.";
export const CAUTION =
  "The findings and the urgency were proposed from the exam record to support the optometrist's judgement; they are not a diagnosis. Check the measurements before acting on them. Local law and licensed practice govern referrals.";

const A4 = { width: 595.28, height: 841.89 };
const MARGIN = { left: 56, right: 56, top: 56, bottom: 72 };
const INK = rgb(0.1, 0.12, 0.16);
const MUTED = rgb(0.36, 0.39, 0.45);
const ACCENT = rgb(0.06, 0.36, 0.42);
const LINE = rgb(0.8, 0.82, 0.86);

let fontBytes: Promise<[Buffer, Buffer]> | null = null;
function loadFonts() {
  const dir = join(process.cwd(), "node_modules", "@fontsource", "nunito-sans", "files");
  fontBytes ??= Promise.all([readFile(join(dir, "nunito-sans-latin-400-normal.woff")), readFile(join(dir, "nunito-sans-latin-700-normal.woff"))]);
  return fontBytes;
}

/** Characters the embedded Latin subset lacks, written in ones it has. */
const FALLBACK: Record<string, string> = { "≈": "~", "≥": ">=", "≤": "<=", "→": "->", "±": "+/-", "Δ": "delta ", "−": "-" };

class Writer {
  page!: PDFPage;
  y = 0;
  private chars: Set<number>;

  constructor(
    readonly doc: PDFDocument,
    readonly regular: PDFFont,
    readonly bold: PDFFont,
    private readonly runningHead: string,
  ) {
    this.chars = new Set(regular.getCharacterSet());
    this.newPage(true);
  }

  get width() {
    return A4.width - MARGIN.left - MARGIN.right;
  }

  clean(text: string): string {
    let out = "";
    for (const ch of text.replace(/\r/g, "").replace(/\t/g, "  ")) {
      const cp = ch.codePointAt(0)!;
      if (ch === "\n" || this.chars.has(cp)) out += ch;
      else out += FALLBACK[ch] ?? (this.chars.has(63) ? "?" : "");
    }
    return out;
  }

  newPage(first = false) {
    this.page = this.doc.addPage([A4.width, A4.height]);
    this.y = A4.height - MARGIN.top;
    if (!first) {
      this.page.drawText(this.clean(this.runningHead), { x: MARGIN.left, y: this.y, size: 8.5, font: this.regular, color: MUTED });
      this.y -= 22;
    }
  }

  ensure(height: number) {
    if (this.y - height < MARGIN.bottom) this.newPage();
  }

  wrap(text: string, font: PDFFont, size: number, width: number): string[] {
    const lines: string[] = [];
    for (const paragraph of this.clean(text).split("\n")) {
      const words = paragraph.split(/ +/);
      let line = "";
      for (let word of words) {
        while (font.widthOfTextAtSize(word, size) > width) {
          // A word longer than the line (an address, a code): break it by characters.
          let cut = word.length;
          while (cut > 1 && font.widthOfTextAtSize((line ? line + " " : "") + word.slice(0, cut), size) > width) cut--;
          if (line && cut <= 1) {
            lines.push(line);
            line = "";
            continue;
          }
          lines.push((line ? line + " " : "") + word.slice(0, cut));
          line = "";
          word = word.slice(cut);
        }
        const next = line ? `${line} ${word}` : word;
        if (font.widthOfTextAtSize(next, size) > width && line) {
          lines.push(line);
          line = word;
        } else line = next;
      }
      lines.push(line);
    }
    return lines;
  }

  text(text: string, opts: { size?: number; bold?: boolean; color?: ReturnType<typeof rgb>; indent?: number; gap?: number } = {}) {
    const size = opts.size ?? 10.5;
    const font = opts.bold ? this.bold : this.regular;
    const indent = opts.indent ?? 0;
    const leading = size * 1.38;
    for (const line of this.wrap(text, font, size, this.width - indent)) {
      this.ensure(leading);
      this.page.drawText(line, { x: MARGIN.left + indent, y: this.y - size, size, font, color: opts.color ?? INK });
      this.y -= leading;
    }
    this.y -= opts.gap ?? 4;
  }

  heading(text: string) {
    this.ensure(40);
    this.y -= 8;
    this.text(text, { size: 12.5, bold: true, color: ACCENT, gap: 2 });
  }

  rule() {
    this.page.drawLine({ start: { x: MARGIN.left, y: this.y }, end: { x: A4.width - MARGIN.right, y: this.y }, thickness: 0.6, color: LINE });
    this.y -= 8;
  }

  /** A table whose rows wrap inside their cells and never split across pages; the header repeats. */
  table(columns: string[], widths: number[], rows: string[][]) {
    const size = 9.5;
    const leading = size * 1.35;
    const pad = 4;
    const total = widths.reduce((a, b) => a + b, 0);
    const cols = widths.map((w) => (w / total) * this.width);
    const drawRow = (cells: string[], header: boolean) => {
      const font = header ? this.bold : this.regular;
      const wrapped = cells.map((c, i) => this.wrap(c, font, size, cols[i]! - pad * 2));
      const height = Math.max(...wrapped.map((w) => w.length)) * leading + pad * 2;
      return { wrapped, height, font };
    };
    const head = drawRow(columns, true);
    const paint = (row: ReturnType<typeof drawRow>, header: boolean) => {
      if (header) this.page.drawRectangle({ x: MARGIN.left, y: this.y - row.height, width: this.width, height: row.height, color: rgb(0.93, 0.96, 0.96) });
      let x = MARGIN.left;
      row.wrapped.forEach((lines, i) => {
        lines.forEach((line, j) => this.page.drawText(line, { x: x + pad, y: this.y - pad - size - j * leading, size, font: row.font, color: INK }));
        x += cols[i]!;
      });
      this.y -= row.height;
      this.page.drawLine({ start: { x: MARGIN.left, y: this.y }, end: { x: A4.width - MARGIN.right, y: this.y }, thickness: 0.5, color: LINE });
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
    this.y -= 8;
  }
}

/** Builds the letter; returns the PDF bytes. */
export async function buildLetterPdf(input: LetterInput): Promise<Uint8Array> {
  const doc = await PDFDocument.create();
  doc.registerFontkit(fontkit);
  const [regularBytes, boldBytes] = await loadFonts();
  const regular = await doc.embedFont(regularBytes, { subset: true });
  const bold = await doc.embedFont(boldBytes, { subset: true });
  doc.setTitle(`Referral: ${input.patient.name}`);
  doc.setAuthor(input.optometrist.name);
  doc.setSubject(`Referral letter ${input.reference}`);
  doc.setProducer("Dioptra");
  doc.setCreator("Dioptra");

  const w = new Writer(doc, regular, bold, `${input.practice.name} · Referral ${input.reference} · ${input.patient.name}, born ${input.patient.dateOfBirth}`);

  // Letterhead.
  w.text(input.practice.name, { size: 18, bold: true, color: ACCENT, gap: 0 });
  w.text([...input.practice.lines, [input.practice.phone && `Tel ${input.practice.phone}`, input.practice.email].filter(Boolean).join(" · ")].filter(Boolean).join("\n"), { size: 9, color: MUTED, gap: 6 });
  w.rule();

  // Addressee and date.
  w.text([input.recipient.name, input.recipient.clinic, ...input.recipient.lines].filter(Boolean).join("\n"), { size: 10.5, gap: 8 });
  w.text(`${input.dated}\nOur reference: ${input.reference}`, { size: 10, color: MUTED, gap: 10 });

  w.text(`Referral — ${input.urgency.label} (${input.urgency.timeFrame})`, { size: 14, bold: true, gap: 4 });
  w.table(
    ["Patient", "Date of birth", "Sex", "Practice reference"],
    [3, 2, 1.3, 2.4],
    [[input.patient.name, input.patient.dateOfBirth, input.patient.sex, input.patient.reference]],
  );
  if (input.patient.address) w.text(`Address: ${input.patient.address}`, { size: 9.5, color: MUTED, gap: 2 });
  if (input.clinical) w.text(`Telephone: ${input.clinical.phone}\nGP: ${input.clinical.gp}`, { size: 9.5, color: MUTED, gap: 6 });
  w.text(`Examined on ${input.exam.examinedOn}${input.exam.signedOn ? `; exam signed ${input.exam.signedOn}` : ""}.`, { size: 9.5, color: MUTED, gap: 8 });

  w.heading("Reason for referral");
  w.text(input.reason);
  if (input.triage?.length || input.urgency.proposed) {
    w.y -= 4;
    w.text(`Urgency: ${input.urgency.label} (${input.urgency.timeFrame}).`, { bold: true, gap: 2 });
    if (input.triage?.length) {
      w.text(`The exam findings call for ${input.urgency.proposed ? input.urgency.proposed.toLowerCase() : "referral"} because of:`, { gap: 2 });
      for (const t of input.triage) w.text(`• ${t.text} (${t.urgency.toLowerCase()})`, { size: 10, gap: 1 });
    }
    if (input.urgency.overrideReason && input.urgency.proposed) {
      w.y -= 3;
      w.text(`The optometrist chose ${input.urgency.label.toLowerCase()} rather than ${input.urgency.proposed.toLowerCase()}: ${input.urgency.overrideReason}`, { gap: 4 });
    }
  }
  if (input.body.trim()) {
    w.y -= 4;
    w.text(input.body);
  }

  w.heading("Findings");
  if (input.findings.length) w.table(["Finding", "Eye", "Measured"], [5, 1, 2.4], input.findings.map((f) => [f.finding, f.eye, f.value]));
  if (input.additionalFindings.trim()) w.text(input.additionalFindings);
  w.text(CAUTION, { size: 8.5, color: MUTED, gap: 6 });

  if (input.measurements.length) {
    w.heading("Measurements at this exam");
    for (const m of input.measurements) {
      // Keep a table's title with its header and first rows.
      w.ensure(90);
      w.text(m.title, { size: 10.5, bold: true, gap: 2 });
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
    for (const a of input.attachments) w.text(`• ${a.name}${a.description ? ` — ${a.description}` : ""}${a.bytes ? " (appended)" : " (not appended: see the practice's records)"}`, { size: 10 });
  }

  // Signature block.
  w.ensure(110);
  w.y -= 16;
  w.text("Yours sincerely,", { gap: 26 });
  w.page.drawLine({ start: { x: 56, y: w.y + 8 }, end: { x: 256, y: w.y + 8 }, thickness: 0.6, color: MUTED });
  w.text(input.optometrist.name, { bold: true, gap: 0 });
  w.text(`${input.optometrist.role}${input.optometrist.licence ? ` · Registration no. ${input.optometrist.licence}` : ""}`, { size: 9.5, gap: 0 });
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
        page.drawText(w.clean(`Enclosure: ${a.name}`), { x: MARGIN.left, y: A4.height - MARGIN.top, size: 10, font: bold, color: INK });
        const maxW = A4.width - MARGIN.left - MARGIN.right;
        const maxH = A4.height - MARGIN.top - MARGIN.bottom - 30;
        const scale = Math.min(maxW / image.width, maxH / image.height, 1);
        page.drawImage(image, { x: MARGIN.left, y: A4.height - MARGIN.top - 20 - image.height * scale, width: image.width * scale, height: image.height * scale });
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
    page.drawLine({ start: { x: MARGIN.left, y: 46 }, end: { x: width - MARGIN.right, y: 46 }, thickness: 0.5, color: LINE });
    page.drawText(w.clean(CONFIDENTIAL_FOOTER), { x: MARGIN.left, y: 34, size: 7.5, font: regular, color: MUTED, maxWidth: width - MARGIN.left - MARGIN.right - 70 });
    page.drawText(label, { x: width - MARGIN.right - regular.widthOfTextAtSize(label, 8.5), y: 34, size: 8.5, font: regular, color: MUTED });
  });

  return doc.save();
}
