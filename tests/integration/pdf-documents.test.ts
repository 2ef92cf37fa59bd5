/**
 * The PDFs as other programs read them: every letter kept (Latin Extended, Greek, Cyrillic and
 * the symbols −, ×, Δ, °), subset fonts with tagged names, Dioptra as creator and producer, and
 * long content wrapped and carried over pages instead of running off them.
 */
import { eq } from "drizzle-orm";
import { beforeAll, describe, expect, it } from "vitest";
import { examRefractions, exams, feeItems, patients } from "~/db/schema";
import { action as examAction } from "~/routes/exams/exam";
import { loader as invoicePdfLoader } from "~/routes/billing/invoice-pdf";
import { createInvoice, issueInvoice, recordDeskPayment } from "~/models/billing/invoices.server";
import { loader as receiptPdfLoader } from "~/routes/billing/receipt-pdf";
import { loader as rxPdfLoader } from "~/routes/patients/prescription-pdf";
import { buildLetterPdf, type LetterInput } from "~/models/referrals/letter-pdf.server";
import { prescriptions } from "~/db/schema";
import { db } from "~/utils/db.server";
import { PDFDocument } from "pdf-lib";
import { PdfFonts, wrapText } from "~/utils/pdf.server";
import { cookieFor, makeRequest, run, statusOf, userByEmail } from "#tests/support/helpers";
import { overlappingWords, pdfFonts, pdfInfo, pdfPages, pdfRaw, pdfWords, savePdf } from "#tests/support/pdf";
import { setTaxRate } from "./billing-support";

const tag = () => Math.random().toString(36).slice(2, 7);
/** Letters from Polish, Czech, French, Greek and Russian, and the symbols an optometrist writes. */
const SAMPLE = "Łukasz ř ś ł œ Δ − × 25° Жанна Щербакова";

let reception: string;
beforeAll(async () => {
  reception = await cookieFor("receptionist");
  await setTaxRate(2000);
});

async function patient(firstName: string, lastName: string) {
  const [p] = await db
    .insert(patients)
    .values({
      firstName,
      lastName,
      dateOfBirth: "1975-03-09",
      email: `pdf-${tag()}@example.test`,
      addressLine1: "3 Wiśniowa ulica",
      city: "Łódź",
    })
    .returning();
  return p!;
}

async function invoiceWith(p: { id: string }, lines: { description: string; priceMinor: number }[]) {
  const r = await userByEmail("reception@dioptra-demo.test");
  const fees = await db
    .insert(feeItems)
    .values(
      lines.map((l, i) => ({
        code: `PDF${i}-${tag()}`.toUpperCase(),
        description: l.description,
        priceMinor: l.priceMinor,
        taxCategory: "exempt" as const,
        kind: "service" as const,
      })),
    )
    .returning();
  const id = await createInvoice({
    patientId: p.id,
    lines: fees.map((f) => ({ feeItemId: f.id, quantity: 1 })),
    actorUserId: r.id,
  });
  const { number } = await issueInvoice(id, r.id);
  return { id, number, reception: r };
}

/** Every font is embedded as a subset with a tagged name (ABCDEF+Name) and maps to Unicode. */
function expectTaggedSubsets(file: string) {
  const fonts = pdfFonts(file);
  expect(fonts.length).toBeGreaterThan(0);
  for (const f of fonts) {
    // ISO 32000-1:2008, 9.6.4: a subset font's name is a tag of six upper-case letters, "+", the PostScript name.
    expect(f.name).toMatch(/^[A-Z]{6}\+[A-Za-z0-9-]+$/);
    expect(f).toMatchObject({ emb: true, sub: true, uni: true });
  }
  const info = pdfInfo(file);
  expect(info.Creator).toBe("Dioptra");
  expect(info.Producer).toBe("Dioptra");
  return fonts;
}

/** No word runs past the page's edge, and none is drawn over another. */
function expectWithinPages(file: string) {
  const words = pdfWords(file);
  for (const w of words) {
    expect(w.xMin, w.text).toBeGreaterThanOrEqual(30);
    expect(w.xMax, w.text).toBeLessThanOrEqual(w.pageWidth - 30);
    expect(w.yMax, w.text).toBeLessThanOrEqual(w.pageHeight);
  }
  expect(overlappingWords(words).map(([a, b]) => `${a.text} / ${b.text}`)).toEqual([]);
  return words;
}

const squash = (s: string) => s.replace(/\s+/g, "");

describe("every letter is kept", () => {
  it("invoice and receipt print Latin Extended, Greek, Cyrillic and −, ×, Δ, ° as themselves", async () => {
    const p = await patient("Łucja", "Řehořová-Śliwińska");
    const inv = await invoiceWith(p, [{ description: `Lens fitting: ${SAMPLE}`, priceMinor: 4500 }]);
    const res = (await run(
      invoicePdfLoader,
      makeRequest(`/billing/invoices/${inv.id}/invoice.pdf`, { cookie: reception }),
      { invoiceId: inv.id },
    )) as Response;
    const file = savePdf(await res.arrayBuffer(), "invoice.pdf");
    const text = pdfRaw(file);
    expect(text).toContain("Łucja Řehořová-Śliwińska");
    expect(text).toContain("Wiśniowa");
    expect(text).toContain(SAMPLE);
    expect(text).not.toContain("?");
    const names = expectTaggedSubsets(file).map((f) => f.name);
    expect(names.some((n) => n.endsWith("+NunitoSans-Regular"))).toBe(true);
    // Δ is not in Nunito Sans: the Greek subset of Noto Sans draws it.
    expect(names.some((n) => n.endsWith("+NotoSans-Regular"))).toBe(true);

    const { paymentId } = await recordDeskPayment({
      invoiceId: inv.id,
      method: "card_desk",
      amountMinor: 1000,
      reference: "Terminal ř-Δ-Ж",
      actorUserId: inv.reception.id,
    });
    const rres = (await run(
      receiptPdfLoader,
      makeRequest(`/billing/payments/${paymentId}/receipt.pdf`, { cookie: reception }),
      { paymentId },
    )) as Response;
    const rfile = savePdf(await rres.arrayBuffer(), "receipt.pdf");
    const rtext = pdfPages(rfile).join("\n");
    expect(rtext).toContain("Łucja Řehořová-Śliwińska");
    expect(rtext).toContain("Terminal ř-Δ-Ж");
    expectTaggedSubsets(rfile);
  }, 60_000);

  it("the prescription prints the true minus, ×, Δ and the patient's own letters", async () => {
    const optom = await userByEmail("optometrist@dioptra-demo.test");
    const p = await patient("Œdipe", "Ševčík-Łoś");
    const [exam] = await db
      .insert(exams)
      .values({
        patientId: p.id,
        optometristId: optom.id,
        status: "signed",
        signedAt: new Date(),
        signedById: optom.id,
      })
      .returning();
    await db.insert(examRefractions).values([
      {
        examId: exam!.id,
        kind: "final",
        eye: "right",
        rawText: "-2.25 -0.75 x 90",
        sphere: -2.25,
        cylinder: -0.75,
        axis: 90,
      },
      {
        examId: exam!.id,
        kind: "final",
        eye: "left",
        rawText: "-2.00 DS",
        sphere: -2,
        cylinder: 0,
        axis: 180,
        prismDioptres: 1,
        prismBase: "up",
      },
    ]);
    const params = { patientId: p.id, examId: exam!.id };
    const issued = await run(
      examAction,
      makeRequest(`/patients/${p.id}/exams/${exam!.id}`, {
        cookie: await cookieFor("optometrist"),
        form: { intent: "issue-rx", kind: "spectacle", lensUse: "varifocal", notes: `Notes: ${SAMPLE}` },
      }),
      params,
    );
    expect(statusOf(issued)).toBe(302);
    const [rx] = await db.select().from(prescriptions).where(eq(prescriptions.patientId, p.id));
    const res = (await run(rxPdfLoader, makeRequest("/x", { cookie: reception }), {
      patientId: p.id,
      prescriptionId: rx!.id,
    })) as Response;
    const file = savePdf(await res.arrayBuffer(), "rx.pdf");
    const text = pdfPages(file).join("\n");
    expect(text).toContain("Œdipe Ševčík-Łoś");
    expect(text).toContain(SAMPLE);
    expect(text).toContain("Prism vert. (Δ)");
    expect(text).toContain("\u22122.25"); // U+2212 MINUS SIGN, not a hyphen
    expect(text).toMatch(/\u22120\.75\s+090/);
    expect(text).not.toContain("?");
    expectTaggedSubsets(file);
  });

  it("the referral letter prints the letters and symbols, with no ASCII stand-ins", async () => {
    const file = savePdf(
      await buildLetterPdf(letter({ reason: `IOP ≥ 28 mmHg right; Δ 2.00 base in; ${SAMPLE}` })),
      "letter.pdf",
    );
    const text = pdfPages(file).join("\n");
    expect(text).toContain("Ἀλέξανδρος Παπαδόπουλος");
    expect(text).toContain(`IOP ≥ 28 mmHg right; Δ 2.00 base in; ${SAMPLE}`);
    expect(text).toContain("−2.25 × 175");
    expect(text).not.toMatch(/\?|delta|>=/);
    const names = expectTaggedSubsets(file).map((f) => f.name);
    // ≥ comes from the mathematical symbols font at the end of the chain.
    expect(names.some((n) => n.endsWith("+NotoSansMath-Regular"))).toBe(true);
  });
});

function letter(over: Partial<LetterInput> = {}): LetterInput {
  return {
    practice: {
      name: "Larkspur Lane Eye Care",
      lines: ["12 Larkspur Lane, Brackenford"],
      phone: "01632 960000",
      email: "hello@larkspur.test",
    },
    dated: "2 December 2026",
    reference: "REF-ŁΔЖ-1",
    recipient: { name: "Dr Ирина Соколова", clinic: "Brackenford Eye Unit", lines: ["1 Test Road"], email: null },
    patient: {
      name: "Ἀλέξανδρος Παπαδόπουλος",
      dateOfBirth: "2 June 1961",
      sex: "Male",
      reference: "P-1",
      address: "9 Quarry Row",
    },
    urgency: { label: "Urgent", timeFrame: "within 2 weeks" },
    reason: "Raised pressure.",
    body: "",
    findings: [{ finding: "Raised IOP", eye: "R", value: "27.5 mmHg" }],
    additionalFindings: "",
    measurements: [{ title: "Refraction", columns: ["Eye", "Rx"], widths: [1, 3], rows: [["R", "−2.25 × 175"]] }],
    history: "",
    exam: { examinedOn: "1 December 2026", signedOn: "1 December 2026" },
    optometrist: { name: "Tobias Wren", licence: "01-31982", role: "Optometrist" },
    attachments: [],
    ...over,
  };
}

describe("long documents", () => {
  it("an invoice of 41 lines goes over pages with the header repeated and keeps its total", async () => {
    const p = await patient("Long", `Invoice-${tag()}`);
    const lines = Array.from({ length: 41 }, (_, i) => ({
      description:
        i === 3
          ? `Varifocal lenses, ${"high-index aspheric with anti-reflection, scratch-resistant and blue-light coatings ".repeat(2)}end of description`
          : `Item ${i + 1} ${SAMPLE}`,
      priceMinor: 1000 + i,
    }));
    const inv = await invoiceWith(p, lines);
    const res = (await run(
      invoicePdfLoader,
      makeRequest(`/billing/invoices/${inv.id}/invoice.pdf`, { cookie: reception }),
      { invoiceId: inv.id },
    )) as Response;
    const file = savePdf(await res.arrayBuffer(), "long-invoice.pdf");
    const pages = pdfPages(file);
    expect(Number(pdfInfo(file).Pages)).toBeGreaterThanOrEqual(2);
    expect(pages.length).toBe(Number(pdfInfo(file).Pages));
    // Each page repeats the letterhead and, while lines continue, the table's header row.
    for (const [i, page] of pages.entries()) {
      expect(page).toContain("Larkspur Lane Eye Care");
      expect(page).toContain(`Page ${i + 1} of ${pages.length}`);
    }
    expect(pages.filter((pg) => /Code\s+Description\s+Qty\s+Unit price\s+Tax\s+Amount/.test(pg)).length).toBe(
      pages.length,
    );
    const all = pdfRaw(file);
    for (let i = 1; i <= 41; i++) if (i !== 4) expect(all).toContain(`Item ${i} ${SAMPLE}`);
    // The long description is wrapped by width, never cut.
    expect(squash(all)).toContain(squash(lines[3]!.description));
    // 41 lines of 10.00 + 0.00…0.40 = 410.00 + 8.20 = 418.20, all exempt.
    expect(pages.at(-1)).toMatch(/Total\s+£418\.20/);
    expect(pages.at(-1)).toMatch(/Amount due\s+£418\.20/);
    expectWithinPages(file);
  }, 60_000);

  it("an 80-character payment reference and a 149-character name wrap inside the page", async () => {
    const longName = `${"Maximiliana-Wilhelmina ".repeat(3).trim()} Przybyszewska-Łukasiewicz`;
    const last = `${longName} ${"Z".repeat(149 - longName.length - 1 - 8)}`;
    const p = await patient("Ålesund", last.slice(0, 149 - 8));
    expect(`${p.firstName} ${p.lastName}`.length).toBe(149);
    const inv = await invoiceWith(p, [{ description: "Eye examination", priceMinor: 6500 }]);
    const reference = `TERMINAL-${"0123456789ABCDEFGHIJ".repeat(4)}`.slice(0, 80);
    expect(reference).toHaveLength(80);
    const { paymentId } = await recordDeskPayment({
      invoiceId: inv.id,
      method: "card_desk",
      amountMinor: 6500,
      reference,
      actorUserId: inv.reception.id,
    });
    const res = (await run(
      receiptPdfLoader,
      makeRequest(`/billing/payments/${paymentId}/receipt.pdf`, { cookie: reception }),
      { paymentId },
    )) as Response;
    const file = savePdf(await res.arrayBuffer(), "receipt.pdf");
    const text = pdfPages(file).join("\n");
    expect(squash(text)).toContain(reference);
    expect(squash(text)).toContain(squash(`${p.firstName} ${p.lastName}`));
    expectWithinPages(file);

    const ires = (await run(
      invoicePdfLoader,
      makeRequest(`/billing/invoices/${inv.id}/invoice.pdf`, { cookie: reception }),
      { invoiceId: inv.id },
    )) as Response;
    const ifile = savePdf(await ires.arrayBuffer(), "invoice.pdf");
    expect(squash(pdfPages(ifile).join("\n"))).toContain(squash(`${p.firstName} ${p.lastName}`));
    expectWithinPages(ifile);
  }, 60_000);

  it("a long referral letter and long prescription notes break over pages inside the margins", async () => {
    const findings = Array.from({ length: 60 }, (_, i) => ({
      finding: `Finding ${i + 1}: ${SAMPLE}`,
      eye: "R",
      value: `${20 + i} mmHg`,
    }));
    const file = savePdf(
      await buildLetterPdf(
        letter({
          findings,
          patient: {
            name: "Ἀλέξανδρος Παπαδόπουλος ".repeat(6).trim(),
            dateOfBirth: "2 June 1961",
            sex: "Male",
            reference: "P-1",
            address: "9 Quarry Row",
          },
        }),
      ),
      "long-letter.pdf",
    );
    const pages = pdfPages(file);
    expect(pages.length).toBeGreaterThanOrEqual(3);
    expect(pages.filter((pg) => /Finding\s+Eye\s+Measured/.test(pg)).length).toBeGreaterThanOrEqual(2);
    expect(pdfRaw(file)).toContain(`Finding 60: ${SAMPLE}`);
    expectWithinPages(file);
  }, 60_000);
});

describe("wrapping by measured width", () => {
  // A fixed-pitch measure: every character is one unit wide.
  const measure = (s: string) => Array.from(s).length;
  it("breaks at spaces, keeps line breaks, and splits a word longer than the line", () => {
    expect(wrapText("aaa bbb ccc", 7, measure)).toEqual(["aaa bbb", "ccc"]);
    expect(wrapText("aaa\nbbb", 10, measure)).toEqual(["aaa", "bbb"]);
    expect(wrapText("x 0123456789AB y", 5, measure)).toEqual(["x", "01234", "56789", "AB y"]);
    expect(wrapText("ŁŁŁŁŁŁ", 4, measure)).toEqual(["ŁŁŁŁ", "ŁŁ"]);
  });
});

describe("characters no bundled font has", () => {
  it("are drawn as a visible box, never dropped, and the letters around them are kept", async () => {
    const doc = await PDFDocument.create();
    const fonts = await PdfFonts.create(doc);
    // Devanagari and Hebrew need shaping pdf-lib does not do, and CJK fonts are too large to ship.
    expect(fonts.covers("你")).toBe(false);
    expect(fonts.covers("ह")).toBe(false);
    const page = doc.addPage();
    fonts.draw(page, "Wen 你 Łoś Δ ≥ 21 Їжак", { x: 50, y: 700, size: 12 });
    const file = savePdf(await doc.save(), "missing.pdf");
    expect(pdfRaw(file).trim()).toBe("Wen \u25a1 Łoś Δ ≥ 21 Їжак");
    expectTaggedSubsets(file);
  });
});
