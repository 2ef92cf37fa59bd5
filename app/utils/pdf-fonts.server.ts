/**
 * Fonts and text for every PDF Dioptra writes (prescriptions, referral letters, invoices,
 * receipts): a chain of embedded fonts chosen glyph by glyph, text measured and wrapped by its
 * real width, and subset fonts named with the six-letter tag PDF requires.
 *
 * The chain: Nunito Sans (Latin, Latin Extended, Vietnamese, Cyrillic, Cyrillic Extended), then
 * Noto Sans (Greek, Greek Extended, and Latin/Cyrillic it has beyond Nunito), then
 * Noto Sans Math (arrows, relations, the minus sign, further Greek). Each font ships in the
 * @fontsource packages as one file per Unicode subset; only the `.woff` files work with pdf-lib
 * and fontkit, and only embedded with subsetting. A file is embedded into a document only when a
 * character of the text needs it, so a plain English invoice carries two small subsets.
 *
 *   const fonts = await PdfFonts.create(doc);
 *   fonts.draw(page, "Δ 2.00 base in, −1.25 × 90°", { x: 50, y: 700, size: 10, face: "regular" });
 *   fonts.width("Łódź", 10, "bold");
 *   wrapText("a long line …", 200, (s) => fonts.width(s, 10, "regular"));
 */
import { randomInt } from "node:crypto";
import { readFile } from "node:fs/promises";
import { createRequire } from "node:module";
import fontkit from "@pdf-lib/fontkit";
import { CustomFontSubsetEmbedder, PDFFont, type Color, type PDFDocument, type PDFPage } from "pdf-lib";

export type Face = "regular" | "bold";

const require = createRequire(import.meta.url);

/** Font files in fallback order, per face. Noto Sans Math has one weight, used for both. */
const FILES: Record<Face, string[]> = {
  regular: [
    ...["latin", "latin-ext", "cyrillic", "cyrillic-ext", "vietnamese"].map(
      (s) => `@fontsource/nunito-sans/files/nunito-sans-${s}-400-normal.woff`,
    ),
    ...["greek", "greek-ext", "latin-ext", "cyrillic-ext"].map(
      (s) => `@fontsource/noto-sans/files/noto-sans-${s}-400-normal.woff`,
    ),
    "@fontsource/noto-sans-math/files/noto-sans-math-latin-400-normal.woff",
  ],
  bold: [
    ...["latin", "latin-ext", "cyrillic", "cyrillic-ext", "vietnamese"].map(
      (s) => `@fontsource/nunito-sans/files/nunito-sans-${s}-700-normal.woff`,
    ),
    ...["greek", "greek-ext", "latin-ext", "cyrillic-ext"].map(
      (s) => `@fontsource/noto-sans/files/noto-sans-${s}-700-normal.woff`,
    ),
    "@fontsource/noto-sans-math/files/noto-sans-math-latin-400-normal.woff",
  ],
};

type FontkitFont = ReturnType<typeof fontkit.create>;

/** One font file: read at start, parsed the first time a character is looked up in it. */
class Source {
  private parsed: { font: FontkitFont; chars: Set<number> } | null = null;
  constructor(
    readonly file: string,
    readonly bytes: Uint8Array,
  ) {}
  private get p() {
    if (!this.parsed) {
      const font = fontkit.create(this.bytes) as FontkitFont;
      this.parsed = { font, chars: new Set(font.characterSet) };
    }
    return this.parsed;
  }
  get font() {
    return this.p.font;
  }
  get chars() {
    return this.p.chars;
  }
}

let sources: Promise<Record<Face, Source[]>> | null = null;

/** Reads every font file once per process (parsing waits until a character needs the file). */
function loadSources() {
  sources ??= (async () => {
    const byFile = new Map<string, Promise<Source>>();
    const load = (file: string) => {
      let p = byFile.get(file);
      if (!p) {
        p = readFile(require.resolve(file)).then((buf) => new Source(file, new Uint8Array(buf)));
        byFile.set(file, p);
      }
      return p;
    };
    const [regular, bold] = await Promise.all([
      Promise.all(FILES.regular.map(load)),
      Promise.all(FILES.bold.map(load)),
    ]);
    return { regular, bold };
  })();
  return sources;
}

const TAG_LETTERS = "ABCDEFGHIJKLMNOPQRSTUVWXYZ";

/**
 * The subset tag: six upper-case letters and "+" before the font's name, so readers know the
 * font is a subset (ISO 32000-1:2008, 9.6.4 "Font Subsets"). Different subsets in one file get
 * different tags.
 */
function subsetTag(used: Set<string>) {
  for (;;) {
    let tag = "";
    for (let i = 0; i < 6; i++) tag += TAG_LETTERS[randomInt(26)];
    if (!used.has(tag)) {
      used.add(tag);
      return tag;
    }
  }
}

/** Removes control characters (keeping line breaks) and composes accents onto their letters. */
export function cleanText(text: string) {
  return (
    text
      .normalize("NFC")
      .replace(/\r\n?/g, "\n")
      .replace(/\t/g, "  ")
      // eslint-disable-next-line no-control-regex -- removing control characters is the point
      .replace(/[\u0000-\u0009\u000b-\u001f\u007f-\u009f\u200b-\u200f\u2028-\u202e\u2060-\u2064\ufeff]/g, "")
  );
}

export type Run = { font: PDFFont; text: string };

/** Drawn for a character no bundled font has: U+25A1 WHITE SQUARE (in Noto Sans Math). */
const MISSING = "\u25a1";

export class PdfFonts {
  private embedded = new Map<string, PDFFont>();
  private tags = new Set<string>();
  /** Which source draws a code point, per face (null: none does). */
  private lookup: Record<Face, Map<number, Source | null>> = { regular: new Map(), bold: new Map() };
  private widths = new Map<string, number>();

  private constructor(
    private readonly doc: PDFDocument,
    private readonly chain: Record<Face, Source[]>,
  ) {}

  /** Fonts for one document. Also names the document's producer and creator. */
  static async create(doc: PDFDocument) {
    doc.registerFontkit(fontkit);
    doc.setProducer("Dioptra");
    doc.setCreator("Dioptra");
    return new PdfFonts(doc, await loadSources());
  }

  /**
   * Embeds one font file into the document on first use. pdf-lib's own `embedFont` is
   * asynchronous only because it awaits fontkit's synchronous parser; the font here is already
   * parsed, so the same embedder is built directly and registered with the document for `save()`.
   */
  private embed(source: Source): PDFFont {
    let font = this.embedded.get(source.file);
    if (font) return font;
    const name = `${subsetTag(this.tags)}+${source.font.postscriptName ?? "Font"}`;
    const Embedder = CustomFontSubsetEmbedder as unknown as new (
      font: unknown,
      bytes: Uint8Array,
      customName?: string,
    ) => CustomFontSubsetEmbedder;
    const embedder = new Embedder(source.font, source.bytes, name);
    font = PDFFont.of(this.doc.context.nextRef(), this.doc, embedder);
    (this.doc as unknown as { fonts: PDFFont[] }).fonts.push(font);
    this.embedded.set(source.file, font);
    return font;
  }

  /** The first font of the chain that has the code point, or null. */
  private sourceFor(cp: number, face: Face): Source | null {
    const cache = this.lookup[face];
    let found = cache.get(cp);
    if (found === undefined) {
      found = this.chain[face].find((s) => s.chars.has(cp)) ?? null;
      cache.set(cp, found);
    }
    return found;
  }

  /** Whether some font of the chain draws the character. */
  covers(ch: string, face: Face = "regular") {
    return this.sourceFor(ch.codePointAt(0)!, face) !== null;
  }

  /**
   * Splits text into runs of one font each. A character that no bundled font has (scripts that
   * need shaping pdf-lib cannot do, such as Arabic or Devanagari, and CJK) is drawn as a visible
   * box, never silently dropped or turned into a look-alike.
   */
  runs(text: string, face: Face): Run[] {
    const out: { source: Source; text: string }[] = [];
    for (let ch of cleanText(text).replace(/\n/g, " ")) {
      let source = this.sourceFor(ch.codePointAt(0)!, face);
      if (!source) {
        ch = MISSING;
        source = this.sourceFor(MISSING.codePointAt(0)!, face)!;
      }
      const last = out[out.length - 1];
      // Spaces join the run before them, so a Greek or Cyrillic phrase stays one run.
      if (last && (last.source === source || (ch === " " && last.source.chars.has(32)))) last.text += ch;
      else out.push({ source, text: ch });
    }
    return out.map((r) => ({ font: this.embed(r.source), text: r.text }));
  }

  /** Width in points (measured at 1 pt and scaled; remembered per text and face). */
  width(text: string, size: number, face: Face = "regular") {
    const key = `${face}\u0000${text}`;
    let w = this.widths.get(key);
    if (w === undefined) {
      w = this.runs(text, face).reduce((sum, r) => sum + r.font.widthOfTextAtSize(r.text, 1), 0);
      this.widths.set(key, w);
    }
    return w * size;
  }

  /** Draws one line (no wrapping) and returns its width. */
  draw(page: PDFPage, text: string, opts: { x: number; y: number; size: number; face?: Face; color?: Color }) {
    let x = opts.x;
    for (const r of this.runs(text, opts.face ?? "regular")) {
      page.drawText(r.text, { x, y: opts.y, size: opts.size, font: r.font, color: opts.color });
      x += r.font.widthOfTextAtSize(r.text, opts.size);
    }
    return x - opts.x;
  }
}

/**
 * Breaks text into lines no wider than `width` by measured width: at spaces where it can, and
 * by characters inside a word longer than a line (a payment reference, an e-mail address).
 * Line breaks in the text are kept.
 */
export function wrapText(text: string, width: number, measure: (s: string) => number): string[] {
  const lines: string[] = [];
  const space = measure(" ");
  for (const paragraph of cleanText(text).split("\n")) {
    let line = "";
    let lineWidth = 0;
    for (const raw of paragraph.split(/ +/)) {
      let word = raw;
      // A line's width is the sum of its words and spaces (kerning across a space is negligible).
      const wordWidth = measure(word);
      const joinedWidth = line ? lineWidth + space + wordWidth : wordWidth;
      if (joinedWidth <= width) {
        line = line ? `${line} ${word}` : word;
        lineWidth = joinedWidth;
        continue;
      }
      if (line) {
        lines.push(line);
        line = "";
      }
      // A word wider than the line: as many characters as fit, then the rest.
      let chars = Array.from(word);
      while (chars.length > 1 && measure(word) > width) {
        // The longest start that fits (at least one character), by bisection.
        let lo = 1;
        let hi = chars.length - 1;
        while (lo < hi) {
          const mid = Math.ceil((lo + hi) / 2);
          if (measure(chars.slice(0, mid).join("")) <= width) lo = mid;
          else hi = mid - 1;
        }
        lines.push(chars.slice(0, lo).join(""));
        chars = chars.slice(lo);
        word = chars.join("");
      }
      line = word;
      lineWidth = measure(word);
    }
    lines.push(line);
  }
  return lines;
}
