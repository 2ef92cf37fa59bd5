/** Reading PDFs the way other programs do: poppler's pdftotext, pdfinfo and pdffonts. */
import { execFileSync } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";

export type PdfWord = {
  page: number;
  text: string;
  xMin: number;
  xMax: number;
  yMin: number;
  yMax: number;
  pageWidth: number;
  pageHeight: number;
};

export function savePdf(bytes: ArrayBuffer | Uint8Array, name = "doc.pdf") {
  const file = join(mkdtempSync(join(tmpdir(), "pdf-")), name);
  writeFileSync(file, Buffer.from(bytes instanceof Uint8Array ? bytes : new Uint8Array(bytes)));
  return file;
}

/** The PDF's text per page (pdftotext -layout, split at form feeds). */
export function pdfPages(file: string): string[] {
  const out = execFileSync("pdftotext", ["-layout", file, "-"], { encoding: "utf8" });
  return out.split("\f").slice(0, -1);
}

/** The document information (pdfinfo): Pages, Creator, Producer, … */
export function pdfInfo(file: string): Record<string, string> {
  const out = execFileSync("pdfinfo", [file], { encoding: "utf8" });
  return Object.fromEntries(
    out
      .split("\n")
      .filter(Boolean)
      .map((l) => [l.slice(0, l.indexOf(":")).trim(), l.slice(l.indexOf(":") + 1).trim()]),
  );
}

/** The fonts of the PDF (pdffonts): name, type, and whether embedded, subset and mapped to Unicode. */
export function pdfFonts(file: string) {
  const lines = execFileSync("pdffonts", [file], { encoding: "utf8" }).split("\n").slice(2).filter(Boolean);
  return lines.map((l) => {
    const cols = l.trim().split(/\s+/);
    // name type [encoding…] emb sub uni object ID: the last five columns are fixed.
    const [emb, sub, uni] = cols.slice(-5, -2);
    return { name: cols[0]!, emb: emb === "yes", sub: sub === "yes", uni: uni === "yes" };
  });
}

/** Every word with its box on the page (pdftotext -bbox). */
export function pdfWords(file: string): PdfWord[] {
  const html = execFileSync("pdftotext", ["-bbox", file, "-"], { encoding: "utf8" });
  const words: PdfWord[] = [];
  let page = 0;
  let width = 0;
  let height = 0;
  const decode = (s: string) =>
    s
      .replace(/&lt;/g, "<")
      .replace(/&gt;/g, ">")
      .replace(/&quot;/g, '"')
      .replace(/&#39;/g, "'")
      .replace(/&amp;/g, "&");
  for (const m of html.matchAll(
    /<page width="([\d.]+)" height="([\d.]+)">|<word xMin="([\d.-]+)" yMin="([\d.-]+)" xMax="([\d.-]+)" yMax="([\d.-]+)">([^<]*)<\/word>/g,
  )) {
    if (m[1]) {
      page++;
      width = Number(m[1]);
      height = Number(m[2]);
    } else
      words.push({
        page,
        text: decode(m[7]!),
        xMin: Number(m[3]),
        yMin: Number(m[4]),
        xMax: Number(m[5]),
        yMax: Number(m[6]),
        pageWidth: width,
        pageHeight: height,
      });
  }
  return words;
}

/** Pairs of words drawn over one another (their boxes overlap by more than a sliver). */
export function overlappingWords(words: PdfWord[]) {
  const out: [PdfWord, PdfWord][] = [];
  for (let i = 0; i < words.length; i++) {
    for (let j = i + 1; j < words.length; j++) {
      const a = words[i]!;
      const b = words[j]!;
      if (a.page !== b.page) continue;
      const dx = Math.min(a.xMax, b.xMax) - Math.max(a.xMin, b.xMin);
      const dy = Math.min(a.yMax, b.yMax) - Math.max(a.yMin, b.yMin);
      if (dx > 1 && dy > 2) out.push([a, b]);
    }
  }
  return out;
}

/** The PDF's text in drawing order with whitespace collapsed, so a wrapped table cell reads as one run. */
export function pdfRaw(file: string) {
  return execFileSync("pdftotext", ["-raw", file, "-"], { encoding: "utf8" }).replace(/\s+/g, " ");
}
