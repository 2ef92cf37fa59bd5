/**
 * Shared PDF writer for prescriptions, invoices and receipts: the practice's letterhead on every
 * page, text in the embedded font chain of `pdf-fonts.server.ts` (every letter of Latin, Greek and
 * Cyrillic scripts, and −, ×, Δ, ° as themselves), lines wrapped by measured width, tables whose
 * header row repeats on every page, automatic page breaks and "Page n of N" footers.
 *
 *   const pdf = await PdfWriter.create({ title: "Spectacle prescription", practice: await loadLetterhead() });
 *   pdf.heading("Spectacle prescription");
 *   pdf.keyValues([["Patient", "Rosalind Achterberg"], ["Date of birth", "17 Apr 1979"]]);
 *   pdf.table({ columns: [{ header: "Eye", width: 60 }, { header: "Sphere", width: 70, align: "right" }], rows: [["R", "−2.25"]] });
 *   pdf.paragraph("Some text that wraps.", { size: 10 });
 *   pdf.notes("Cautions", ["Check before ordering lenses."]);
 *   const bytes = await pdf.finish(); // Uint8Array
 */
import { eq } from "drizzle-orm";
import { PDFDocument, rgb, type PDFPage } from "pdf-lib";
import { practiceSettings } from "~/db/schema";
import { db } from "./db.server";
import { PdfFonts, wrapText, type Face } from "./pdf-fonts.server";

export { PdfFonts, wrapText, cleanText, type Face } from "./pdf-fonts.server";

export type Letterhead = { name: string; lines: string[] };

/** The practice's name and address lines from practice_settings. */
export async function loadLetterhead(): Promise<Letterhead> {
  const [s] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
  if (!s) return { name: "Practice", lines: [] };
  const address = [s.addressLine1, s.addressLine2, s.city, s.postcode].filter(Boolean).join(", ");
  const contact = [s.phone && `Tel. ${s.phone}`, s.email].filter(Boolean).join(" · ");
  return { name: s.name, lines: [address, contact].filter(Boolean) };
}

const A4 = { width: 595.28, height: 841.89 };
const MARGIN = 50;
const FOOTER = MARGIN + 30;
const INK = rgb(0.09, 0.13, 0.17);
const MUTED = rgb(0.29, 0.35, 0.4);
const ACCENT = rgb(0.05, 0.36, 0.38);
const RULE = rgb(0.83, 0.87, 0.89);

export type Column = { header: string; width: number; align?: "left" | "right" };

export class PdfWriter {
  private page!: PDFPage;
  private y = 0;
  private pages: PDFPage[] = [];
  /** Redrawn under the letterhead of every page after the first (a table's header row, say). */
  private continued: (() => void) | null = null;

  private constructor(
    readonly doc: PDFDocument,
    readonly fonts: PdfFonts,
    readonly practice: Letterhead,
    private readonly docLabel: string,
  ) {}

  /** `label` is printed at the letterhead's right on every page ("INVOICE", "RECEIPT"). */
  static async create(opts: {
    title: string;
    practice: Letterhead;
    author?: string;
    subject?: string;
    label?: string;
  }) {
    const doc = await PDFDocument.create();
    const fonts = await PdfFonts.create(doc);
    doc.setTitle(opts.title);
    if (opts.author) doc.setAuthor(opts.author);
    if (opts.subject) doc.setSubject(opts.subject);
    const writer = new PdfWriter(doc, fonts, opts.practice, opts.label ?? "");
    writer.newPage();
    return writer;
  }

  get contentWidth() {
    return A4.width - 2 * MARGIN;
  }

  /** Width of text in the document's fonts. */
  width(text: string, size: number, face: Face = "regular") {
    return this.fonts.width(text, size, face);
  }

  lines(text: string, size: number, width: number, face: Face = "regular") {
    return wrapText(text, width, (s) => this.fonts.width(s, size, face));
  }

  private draw(text: string, x: number, y: number, size: number, face: Face = "regular", color = INK) {
    this.fonts.draw(this.page, text, { x, y, size, face, color });
  }

  private newPage() {
    this.page = this.doc.addPage([A4.width, A4.height]);
    this.pages.push(this.page);
    let y = A4.height - MARGIN;
    const labelWidth = this.docLabel ? this.width(this.docLabel, 14, "bold") + 16 : 0;
    const nameLines = this.lines(this.practice.name, 16, this.contentWidth - labelWidth, "bold");
    if (this.docLabel)
      this.draw(this.docLabel, A4.width - MARGIN - this.width(this.docLabel, 14, "bold"), y - 15, 14, "bold");
    for (const line of nameLines) {
      this.draw(line, MARGIN, y - 16, 16, "bold", ACCENT);
      y -= 20;
    }
    y -= 2;
    for (const line of this.practice.lines.flatMap((l) => this.lines(l, 9, this.contentWidth))) {
      y -= 12;
      this.draw(line, MARGIN, y, 9, "regular", MUTED);
    }
    y -= 10;
    this.page.drawLine({ start: { x: MARGIN, y }, end: { x: A4.width - MARGIN, y }, thickness: 1, color: ACCENT });
    this.y = y - 20;
    if (this.pages.length > 1 && this.continued) this.continued();
  }

  /** Starts a new page when less than `height` points remain above the footer. */
  ensure(height: number) {
    if (this.y - height < FOOTER) this.newPage();
  }

  spacer(height = 10) {
    this.y -= height;
  }

  heading(text: string, size = 14) {
    const lines = this.lines(text, size, this.contentWidth, "bold");
    // Keep a heading with at least two lines of what follows it.
    this.ensure(lines.length * (size + 4) + 36);
    for (const line of lines) {
      this.draw(line, MARGIN, this.y - size, size, "bold");
      this.y -= size + 4;
    }
    this.y -= 6;
  }

  paragraph(text: string, opts: { size?: number; bold?: boolean; muted?: boolean; indent?: number } = {}) {
    const size = opts.size ?? 10;
    const face: Face = opts.bold ? "bold" : "regular";
    const indent = opts.indent ?? 0;
    for (const line of this.lines(text, size, this.contentWidth - indent, face)) {
      this.ensure(size + 4);
      this.draw(line, MARGIN + indent, this.y - size, size, face, opts.muted ? MUTED : INK);
      this.y -= size + 4;
    }
    this.y -= 4;
  }

  /** A line to sign on, with the signer's name (and what they are) printed under it. */
  signatureLine(label: string, under: string[]) {
    this.ensure(40 + 14 * under.length);
    this.y -= 28;
    this.draw(label, MARGIN, this.y + 2, 10, "bold", MUTED);
    const x = MARGIN + this.width(label, 10, "bold") + 8;
    this.page.drawLine({ start: { x, y: this.y }, end: { x: x + 220, y: this.y }, thickness: 0.6, color: MUTED });
    this.y -= 6;
    for (const line of under) {
      this.draw(line, x, this.y - 10, 10);
      this.y -= 14;
    }
    this.y -= 6;
  }

  /** Label and value pairs; both wrap in their own column, and a pair is never split across pages. */
  keyValues(rows: [string, string][], keyWidth = 130) {
    for (const [k, v] of rows) {
      const keys = this.lines(k, 10, keyWidth - 8, "bold");
      const values = this.lines(v, 10, this.contentWidth - keyWidth);
      const n = Math.max(keys.length, values.length);
      this.ensure(14 * n);
      keys.forEach((line, i) => this.draw(line, MARGIN, this.y - 10 - i * 14, 10, "bold", MUTED));
      values.forEach((line, i) => this.draw(line, MARGIN + keyWidth, this.y - 10 - i * 14, 10));
      this.y -= 14 * n + 2;
    }
    this.y -= 6;
  }

  /**
   * A table whose cells wrap inside their columns; a row is never split across pages, and the
   * header row is repeated at the top of every page the table continues on.
   */
  table(opts: { columns: Column[]; rows: string[][]; size?: number }) {
    const size = opts.size ?? 10;
    const leading = size + 3;
    const pad = 3;
    const full = opts.columns.reduce((s, c) => s + c.width, 0);
    const layout = (cells: string[], face: Face) => {
      const wrapped = opts.columns.map((c, i) => this.lines(cells[i] ?? "", size, c.width - 8, face));
      return { wrapped, face, height: Math.max(1, ...wrapped.map((l) => l.length)) * leading + pad * 2 };
    };
    const paint = (row: ReturnType<typeof layout>) => {
      let x = MARGIN;
      opts.columns.forEach((c, i) => {
        row.wrapped[i]!.forEach((line, j) => {
          const w = this.width(line, size, row.face);
          this.draw(
            line,
            c.align === "right" ? x + c.width - w - 6 : x,
            this.y - pad - size - j * leading,
            size,
            row.face,
          );
        });
        x += c.width;
      });
      this.y -= row.height;
      this.page.drawLine({
        start: { x: MARGIN, y: this.y + 1 },
        end: { x: MARGIN + full, y: this.y + 1 },
        thickness: 0.5,
        color: RULE,
      });
    };
    const header = layout(
      opts.columns.map((c) => c.header),
      "bold",
    );
    const rows = opts.rows.map((r) => layout(r, "regular"));
    // The header with the first row at least.
    this.ensure(header.height + (rows[0]?.height ?? 0));
    paint(header);
    const previous = this.continued;
    this.continued = () => paint(header);
    for (const row of rows) {
      this.ensure(row.height);
      paint(row);
    }
    this.continued = previous;
    this.y -= 8;
  }

  /** Right-aligned label and amount lines (an invoice's totals), kept together on one page. */
  totals(rows: { label: string; value: string; bold?: boolean }[], valueWidth = 90) {
    const labelWidth = this.contentWidth - valueWidth - 10;
    const laid = rows.map((r) => {
      const size = r.bold ? 11 : 10;
      const face: Face = r.bold ? "bold" : "regular";
      return { ...r, size, face, labels: this.lines(r.label, size, labelWidth, face) };
    });
    this.ensure(laid.reduce((h, r) => h + r.labels.length * (r.size + 5), 0));
    const right = A4.width - MARGIN;
    for (const r of laid) {
      r.labels.forEach((line, i) => {
        this.draw(
          line,
          right - valueWidth - 10 - this.width(line, r.size, r.face),
          this.y - r.size - i * (r.size + 5),
          r.size,
          r.face,
        );
      });
      this.draw(r.value, right - this.width(r.value, r.size, r.face), this.y - r.size, r.size, r.face);
      this.y -= r.labels.length * (r.size + 5);
    }
    this.y -= 8;
  }

  notes(title: string, lines: string[]) {
    this.heading(title, 11);
    for (const l of lines) this.paragraph(`• ${l}`, { size: 9, muted: true });
  }

  /** Adds "Page n of N" footers and returns the bytes. */
  async finish() {
    const total = this.pages.length;
    this.pages.forEach((p, i) => {
      const label = `Page ${i + 1} of ${total}`;
      const w = this.width(label, 8);
      this.fonts.draw(p, label, { x: A4.width - MARGIN - w, y: MARGIN - 20, size: 8, color: MUTED });
      const name = this.lines(this.practice.name, 8, this.contentWidth - w - 20)[0] ?? "";
      this.fonts.draw(p, name, { x: MARGIN, y: MARGIN - 20, size: 8, color: MUTED });
    });
    return this.doc.save();
  }
}
