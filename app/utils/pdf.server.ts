/**
 * Shared PDF writer for prescriptions, referral letters, invoices and receipts: the practice's
 * letterhead on every page, Nunito Sans embedded (the .woff files with subsetting — WOFF2 or an
 * unsubsetted font give blank text with pdf-lib), automatic page breaks, "Page n of N" footers.
 *
 *   const pdf = await PdfWriter.create({ title: "Spectacle prescription", practice: await loadLetterhead() });
 *   pdf.heading("Spectacle prescription");
 *   pdf.keyValues([["Patient", "Rosalind Achterberg"], ["Date of birth", "17 Apr 1979"]]);
 *   pdf.table({ columns: [{ header: "Eye", width: 60 }, { header: "Sphere", width: 70, align: "right" }], rows: [["R", "-2.25"]] });
 *   pdf.paragraph("Some text that wraps.", { size: 10 });
 *   pdf.notes("Cautions", ["Check before ordering lenses."]);
 *   const bytes = await pdf.finish(); // Uint8Array
 */
import { readFile } from "node:fs/promises";
import { createRequire } from "node:module";
import fontkit from "@pdf-lib/fontkit";
import { eq } from "drizzle-orm";
import { PDFDocument, rgb, type PDFFont, type PDFPage } from "pdf-lib";
import { practiceSettings } from "~/db/schema";
import { db } from "./db.server";

export type Letterhead = { name: string; lines: string[] };

/** The practice's name and address lines from practice_settings. */
export async function loadLetterhead(): Promise<Letterhead> {
  const [s] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
  if (!s) return { name: "Practice", lines: [] };
  const address = [s.addressLine1, s.addressLine2, s.city, s.postcode].filter(Boolean).join(", ");
  const contact = [s.phone && `Tel. ${s.phone}`, s.email].filter(Boolean).join(" · ");
  return { name: s.name, lines: [address, contact].filter(Boolean) };
}

const require = createRequire(import.meta.url);
let fontBytes: Promise<[Uint8Array, Uint8Array]> | null = null;
function loadFonts() {
  fontBytes ??= Promise.all([
    readFile(require.resolve("@fontsource/nunito-sans/files/nunito-sans-latin-400-normal.woff")),
    readFile(require.resolve("@fontsource/nunito-sans/files/nunito-sans-latin-700-normal.woff")),
  ]).then(([a, b]) => [new Uint8Array(a), new Uint8Array(b)]);
  return fontBytes;
}

/** Characters outside the embedded Latin subset, replaced by their plain forms. */
export function pdfSafe(text: string) {
  return text
    .replace(/[\u2212\u2012\u2013\u2014]/g, "-")
    .replace(/\u00d7/g, "x")
    .replace(/\u0394/g, "prism D ")
    .replace(/[\u2018\u2019]/g, "'")
    .replace(/[\u201c\u201d]/g, '"')
    .replace(/\u2026/g, "...")
    .replace(/[^\x20-\x7e\u00a0-\u00ff]/g, "?");
}

const A4 = { width: 595.28, height: 841.89 };
const MARGIN = 50;
const INK = rgb(0.09, 0.13, 0.17);
const MUTED = rgb(0.29, 0.35, 0.4);
const ACCENT = rgb(0.05, 0.36, 0.38);

export type Column = { header: string; width: number; align?: "left" | "right" };

export class PdfWriter {
  private page!: PDFPage;
  private y = 0;
  private pages: PDFPage[] = [];

  private constructor(
    readonly doc: PDFDocument,
    readonly regular: PDFFont,
    readonly bold: PDFFont,
    readonly practice: Letterhead,
  ) {}

  static async create(opts: { title: string; practice: Letterhead; author?: string }) {
    const doc = await PDFDocument.create();
    doc.registerFontkit(fontkit);
    const [r, b] = await loadFonts();
    const writer = new PdfWriter(doc, await doc.embedFont(r, { subset: true }), await doc.embedFont(b, { subset: true }), opts.practice);
    doc.setTitle(pdfSafe(opts.title));
    doc.setCreator("Dioptra");
    if (opts.author) doc.setAuthor(pdfSafe(opts.author));
    writer.newPage();
    return writer;
  }

  get contentWidth() {
    return A4.width - 2 * MARGIN;
  }

  private newPage() {
    this.page = this.doc.addPage([A4.width, A4.height]);
    this.pages.push(this.page);
    let y = A4.height - MARGIN;
    this.page.drawText(pdfSafe(this.practice.name), { x: MARGIN, y: y - 16, size: 16, font: this.bold, color: ACCENT });
    y -= 22;
    for (const line of this.practice.lines) {
      y -= 12;
      this.page.drawText(pdfSafe(line), { x: MARGIN, y, size: 9, font: this.regular, color: MUTED });
    }
    y -= 10;
    this.page.drawLine({ start: { x: MARGIN, y }, end: { x: A4.width - MARGIN, y }, thickness: 1, color: ACCENT });
    this.y = y - 20;
  }

  /** Starts a new page when less than `height` points remain above the footer. */
  ensure(height: number) {
    if (this.y - height < MARGIN + 30) this.newPage();
  }

  spacer(height = 10) {
    this.y -= height;
  }

  heading(text: string, size = 14) {
    this.ensure(size + 10);
    this.page.drawText(pdfSafe(text), { x: MARGIN, y: this.y - size, size, font: this.bold, color: INK });
    this.y -= size + 10;
  }

  private wrap(text: string, font: PDFFont, size: number, width: number) {
    const lines: string[] = [];
    for (const para of pdfSafe(text).split("\n")) {
      let line = "";
      for (const word of para.split(/\s+/)) {
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

  paragraph(text: string, opts: { size?: number; bold?: boolean; muted?: boolean } = {}) {
    const size = opts.size ?? 10;
    const font = opts.bold ? this.bold : this.regular;
    for (const line of this.wrap(text, font, size, this.contentWidth)) {
      this.ensure(size + 4);
      this.page.drawText(line, { x: MARGIN, y: this.y - size, size, font, color: opts.muted ? MUTED : INK });
      this.y -= size + 4;
    }
    this.y -= 4;
  }

  keyValues(rows: [string, string][], keyWidth = 130) {
    for (const [k, v] of rows) {
      const lines = this.wrap(v, this.regular, 10, this.contentWidth - keyWidth);
      this.ensure(14 * lines.length);
      this.page.drawText(pdfSafe(k), { x: MARGIN, y: this.y - 10, size: 10, font: this.bold, color: MUTED });
      lines.forEach((line, i) => this.page.drawText(line, { x: MARGIN + keyWidth, y: this.y - 10 - i * 14, size: 10, font: this.regular, color: INK }));
      this.y -= 14 * lines.length + 2;
    }
    this.y -= 6;
  }

  table(opts: { columns: Column[]; rows: string[][]; size?: number }) {
    const size = opts.size ?? 10;
    const rowH = size + 8;
    const draw = (cells: string[], font: PDFFont) => {
      this.ensure(rowH);
      let x = MARGIN;
      opts.columns.forEach((c, i) => {
        const t = pdfSafe(cells[i] ?? "");
        const w = font.widthOfTextAtSize(t, size);
        this.page.drawText(t, { x: c.align === "right" ? x + c.width - w - 6 : x, y: this.y - size - 2, size, font, color: INK });
        x += c.width;
      });
      this.y -= rowH;
      this.page.drawLine({ start: { x: MARGIN, y: this.y + 2 }, end: { x: MARGIN + opts.columns.reduce((s, c) => s + c.width, 0), y: this.y + 2 }, thickness: 0.5, color: rgb(0.83, 0.87, 0.89) });
    };
    draw(opts.columns.map((c) => c.header), this.bold);
    for (const r of opts.rows) draw(r, this.regular);
    this.y -= 8;
  }

  notes(title: string, lines: string[]) {
    this.heading(title, 11);
    for (const l of lines) this.paragraph(`- ${l}`, { size: 9, muted: true });
  }

  /** Adds "Page n of N" footers and returns the bytes. */
  async finish() {
    const total = this.pages.length;
    this.pages.forEach((p, i) => {
      const label = `Page ${i + 1} of ${total}`;
      const w = this.regular.widthOfTextAtSize(label, 8);
      p.drawText(label, { x: A4.width - MARGIN - w, y: MARGIN - 20, size: 8, font: this.regular, color: MUTED });
      p.drawText(pdfSafe(this.practice.name), { x: MARGIN, y: MARGIN - 20, size: 8, font: this.regular, color: MUTED });
    });
    return this.doc.save();
  }
}
