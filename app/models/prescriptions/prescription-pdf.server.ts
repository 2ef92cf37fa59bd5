/**
 * The prescription as printed. What a UK spectacle prescription carries follows the College of
 * Optometrists' Guidance for Professional Practice, "Prescribing spectacles" (A330–A335: issue a
 * prescription or a statement that none is needed, say when there is no clinically significant
 * change, include what the Sight Testing (Examination and Prescription) (No. 2) Regulations 1989
 * require, write it according to British Standards, and say if the spectacles are for specific
 * purposes only; Opticians Act 1989 s26(2)). Prism is printed as horizontal and vertical
 * components with their bases; the vertex distance only when it was measured. The PD is printed
 * as a dispensing measurement; the College notes it is not part of the prescription itself.
 */
import { and, eq } from "drizzle-orm";
import { exams, patients, practiceSettings, prescriptions } from "~/db/schema";
import { REPLACEMENTS } from "~/lib/contact-lens/catalogue";
import { rxCautions } from "~/lib/exam/sections";
import { formatDate } from "~/lib/format";
import { formatRx, type SphCyl } from "~/lib/optics";
import { jurisdictionOf } from "~/lib/optics/jurisdiction";
import { db } from "~/utils/db.server";
import { notFound } from "~/utils/failure.server";
import { loadLetterhead, PdfWriter } from "~/utils/pdf.server";
import { LENS_USES, prescriptionsOf, STATEMENTS } from "./prescriptions.server";

/** Printed powers use the true minus sign (U+2212) and the multiplication sign before an axis. */
const typeset = (s: string) => s.replace(/(^|[\s(/])-(?=\d)/g, "$1\u2212").replace(/ x (?=\d)/g, " \u00d7 ");
const num = (x: number | null | undefined, d = 2, signed = true) =>
  x === null || x === undefined ? "" : typeset(`${signed && x > 0 ? "+" : ""}${x.toFixed(d)}`);
const rxParts = (r: SphCyl): [string, string, string] => {
  const t = formatRx(r).split(" ").map(typeset);
  return r.cylinder === 0 ? [t[0] ?? "", "DS", ""] : [t[0] ?? "", t[1] ?? "", t[3] ?? ""];
};
const side = (eye: string) => (eye === "right" ? "Right" : "Left");
const prism = (p: number | null, base: string | null) => (p ? `${p.toFixed(2)} base ${base}` : "");

/** The prescription's PDF and its file name; another patient's prescription answers 404. */
export async function prescriptionPdf(patientId: string, prescriptionId: string) {
  const [row] = await db
    .select({ id: prescriptions.id, examinedAt: exams.examinedAt })
    .from(prescriptions)
    .innerJoin(exams, eq(exams.id, prescriptions.examId))
    .where(and(eq(prescriptions.id, prescriptionId), eq(prescriptions.patientId, patientId)));
  if (!row) notFound();
  const rx = (await prescriptionsOf(patientId)).find((p) => p.id === row.id)!;
  const [patient] = await db.select().from(patients).where(eq(patients.id, patientId));
  const [settings] = await db
    .select({ jurisdiction: practiceSettings.jurisdiction })
    .from(practiceSettings)
    .where(eq(practiceSettings.id, 1));
  const rules = jurisdictionOf(settings?.jurisdiction);
  const title = rx.kind === "spectacle" ? "Spectacle prescription" : "Contact-lens prescription";
  const pdf = await PdfWriter.create({ title, practice: await loadLetterhead(), author: rx.prescriberName });
  pdf.heading(title, 16);
  pdf.keyValues([
    ["Patient", `${patient!.firstName} ${patient!.lastName}`],
    ["Date of birth", formatDate(patient!.dateOfBirth)],
    ["Address", [patient!.addressLine1, patient!.city, patient!.postcode].filter(Boolean).join(", ") || "-"],
    ["Date of examination", formatDate(row.examinedAt.toISOString())],
    ["Issued", formatDate(rx.issuedAt)],
    ["Valid until", formatDate(rx.expiresOn)],
  ]);
  if (rx.kind === "spectacle") {
    if (rx.statement !== "none") pdf.paragraph(`${STATEMENTS[rx.statement]}.`, { bold: true, size: 11 });
    pdf.keyValues([
      ["Lens use", rx.lensUse ? (LENS_USES[rx.lensUse as keyof typeof LENS_USES] ?? rx.lensUse) : "-"],
      ["Referred", rx.referred ? "Yes: the patient was referred at this examination" : "No"],
    ]);
    pdf.table({
      columns: [
        { header: "Eye", width: 42 },
        { header: "Sphere", width: 52, align: "right" },
        { header: "Cyl.", width: 52, align: "right" },
        { header: "Axis", width: 36, align: "right" },
        { header: "Near add", width: 50, align: "right" },
        { header: "Int. add", width: 50, align: "right" },
        { header: "Prism horiz. (Δ)", width: 100 },
        { header: "Prism vert. (Δ)", width: 100 },
      ],
      rows: rx.eyes.map((e) => {
        const [s, c, a] = rxParts(e);
        return [
          side(e.eye),
          s,
          c,
          a,
          num(e.addPower),
          num(e.intermediateAdd),
          prism(e.prismHorizontal, e.prismHorizontalBase),
          prism(e.prismVertical, e.prismVerticalBase),
        ];
      }),
    });
    const pds = rx.eyes.filter((e) => e.pdDistanceMm !== null || e.pdNearMm !== null);
    const vertex = rx.eyes.filter((e) => e.vertexMm !== null);
    pdf.keyValues([
      ...(pds.length
        ? [
            [
              "PD, monocular",
              pds
                .map(
                  (e) =>
                    `${side(e.eye)}: distance ${e.pdDistanceMm?.toFixed(1) ?? "-"} mm, near ${e.pdNearMm?.toFixed(1) ?? "-"} mm`,
                )
                .join("; "),
            ] as [string, string],
          ]
        : []),
      // Printed only when measured: a vertex distance tells the dispenser to compensate for it.
      ...(vertex.length
        ? [["Vertex distance", vertex.map((e) => `${side(e.eye)} ${e.vertexMm} mm`).join("; ")] as [string, string]]
        : []),
    ]);
  } else {
    pdf.table({
      columns: [
        { header: "Eye", width: 36 },
        { header: "Lens", width: 130 },
        { header: "Replacement", width: 82 },
        { header: "BC", width: 38, align: "right" },
        { header: "Dia.", width: 38, align: "right" },
        { header: "Sphere", width: 50, align: "right" },
        { header: "Cyl.", width: 50, align: "right" },
        { header: "Axis", width: 36, align: "right" },
      ],
      rows: rx.eyes.map((e) => {
        const [s, c, a] = rxParts(e);
        return [
          side(e.eye),
          [e.lensManufacturer, e.lensName, e.lensMaterial ? `(${e.lensMaterial})` : ""].filter(Boolean).join(" "),
          e.lensReplacement ? REPLACEMENTS[e.lensReplacement] : "",
          e.baseCurveMm !== null ? e.baseCurveMm.toFixed(2) : "",
          e.diameterMm !== null ? e.diameterMm.toFixed(1) : "",
          s,
          c,
          a,
        ];
      }),
    });
    const guides = rx.eyes.filter((e) => e.exactSphere !== null && e.spectacleSphere !== null);
    if (guides.length)
      pdf.paragraph(
        `Guide only, not for ordering: the spectacle refraction at the cornea (F/(1 − dF)) was ${guides
          .map(
            (e) =>
              `${side(e.eye)} ${num(e.exactSphere)} / ${num(e.exactCylinder)} × ${e.exactAxis} (spectacles ${typeset(formatRx({ sphere: e.spectacleSphere!, cylinder: e.spectacleCylinder!, axis: e.spectacleAxis! }))})`,
          )
          .join("; ")}.`,
        { size: 9, muted: true },
      );
  }
  if (rx.notes) pdf.keyValues([["Notes", rx.notes]]);
  pdf.spacer(6);
  pdf.keyValues([
    ["Prescriber", rx.prescriberName],
    [rules.registrationLabel, rx.prescriberLicence || "-"],
  ]);
  pdf.signatureLine("Signature", [rx.prescriberName, `Issued ${formatDate(rx.issuedAt)}`]);
  pdf.notes("Cautions", [...rxCautions(rx.kind)]);
  const bytes = await pdf.finish();
  return { rx, bytes, fileName: `prescription-${rx.issuedAt.slice(0, 10)}.pdf` };
}
