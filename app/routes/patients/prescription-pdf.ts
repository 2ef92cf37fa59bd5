import { and, eq } from "drizzle-orm";
import type { Route } from "./+types/prescription-pdf";
import { patients, practiceSettings, prescriptions } from "~/db/schema";
import { jurisdictionOf } from "~/lib/optics/jurisdiction";
import { formatRx, type SphCyl } from "~/lib/optics";
import { audit } from "~/utils/audit.server";
import { assertPatientAccess, requireUser } from "~/utils/auth.server";
import { db } from "~/utils/db.server";
import { loadLetterhead, PdfWriter } from "~/utils/pdf.server";
import { formatDate } from "~/lib/format";
import { isUuid } from "~/models/patients/patient-schema";
import { prescriptionsOf, RX_CAUTIONS } from "~/models/prescriptions/prescriptions.server";
import { notFound } from "~/utils/failure.server";

/** Printed powers use the true minus sign (U+2212) and the multiplication sign before an axis. */
const typeset = (s: string) => s.replace(/(^|[\s(/])-(?=\d)/g, "$1\u2212").replace(/ x (?=\d)/g, " \u00d7 ");
const num = (x: number | null | undefined, d = 2, signed = true) =>
  x === null || x === undefined ? "" : typeset(`${signed && x > 0 ? "+" : ""}${x.toFixed(d)}`);
const rxParts = (r: SphCyl): [string, string, string] => {
  const t = formatRx(r).split(" ").map(typeset);
  return r.cylinder === 0 ? [t[0] ?? "", "DS", ""] : [t[0] ?? "", t[1] ?? "", t[3] ?? ""];
};

/**
 * GET /patients/:patientId/prescriptions/:prescriptionId/pdf — every prescription is signed at
 * issue, so the front desk may print it; a patient only their own.
 */
export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireUser(request);
  assertPatientAccess(user, params.patientId);
  if (!isUuid(params.patientId) || !isUuid(params.prescriptionId)) notFound();
  const [exists] = await db
    .select({ id: prescriptions.id })
    .from(prescriptions)
    .where(and(eq(prescriptions.id, params.prescriptionId), eq(prescriptions.patientId, params.patientId)));
  if (!exists) notFound();
  const rx = (await prescriptionsOf(params.patientId)).find((p) => p.id === exists.id)!;
  const [patient] = await db.select().from(patients).where(eq(patients.id, params.patientId));
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
    ["Issued", formatDate(rx.issuedAt)],
    ["Valid until", formatDate(rx.expiresOn)],
  ]);
  if (rx.kind === "spectacle") {
    pdf.table({
      columns: [
        { header: "Eye", width: 50 },
        { header: "Sphere", width: 65, align: "right" },
        { header: "Cylinder", width: 65, align: "right" },
        { header: "Axis", width: 45, align: "right" },
        { header: "Add", width: 55, align: "right" },
        { header: "Prism (Δ)", width: 55, align: "right" },
        { header: "Base", width: 50 },
        { header: "Vertex", width: 60, align: "right" },
      ],
      rows: rx.eyes.map((e) => {
        const [s, c, a] = rxParts(e);
        return [
          e.eye === "right" ? "Right" : "Left",
          s,
          c,
          a,
          num(e.addPower),
          e.prismDioptres ? e.prismDioptres.toFixed(2) : "",
          e.prismBase ?? "",
          e.vertexMm !== null ? `${e.vertexMm} mm` : "",
        ];
      }),
    });
  } else {
    if (rx.lensName) pdf.keyValues([["Lens", rx.lensName]]);
    pdf.table({
      columns: [
        { header: "Eye", width: 45 },
        { header: "Sphere", width: 60, align: "right" },
        { header: "Cylinder", width: 60, align: "right" },
        { header: "Axis", width: 40, align: "right" },
        { header: "Add", width: 50, align: "right" },
        { header: "BC", width: 45, align: "right" },
        { header: "Dia.", width: 45, align: "right" },
        { header: "Exact at cornea", width: 150 },
      ],
      rows: rx.eyes.map((e) => {
        const [s, c, a] = rxParts(e);
        const exact =
          e.exactSphere !== null ? `${num(e.exactSphere, 3)} / ${num(e.exactCylinder, 3)} × ${e.exactAxis}` : "";
        return [
          e.eye === "right" ? "Right" : "Left",
          s,
          c,
          a,
          num(e.addPower),
          e.baseCurveMm ? e.baseCurveMm.toFixed(2) : "",
          e.diameterMm ? e.diameterMm.toFixed(1) : "",
          exact,
        ];
      }),
    });
    pdf.paragraph(
      `From the spectacle refraction: ${rx.eyes.map((e) => `${e.eye === "right" ? "R" : "L"} ${typeset(formatRx({ sphere: e.spectacleSphere!, cylinder: e.spectacleCylinder!, axis: e.spectacleAxis! }))}`).join("; ")}.`,
      { size: 9, muted: true },
    );
  }
  if (rx.notes) pdf.keyValues([["Notes", rx.notes]]);
  pdf.spacer(10);
  pdf.keyValues([
    ["Prescriber", rx.prescriberName],
    [rules.registrationLabel, rx.prescriberLicence || "-"],
    ["Signed", `Electronically signed at issue, ${formatDate(rx.issuedAt)}`],
  ]);
  pdf.notes("Cautions", [...RX_CAUTIONS]);
  const bytes = await pdf.finish();
  await audit({
    action: "prescription.printed",
    actorUserId: user.id,
    entityType: "prescription",
    entityId: rx.id,
    patientId: rx.patientId,
    request,
  });
  return new Response(new Uint8Array(bytes), {
    headers: {
      "content-type": "application/pdf",
      "content-disposition": `attachment; filename="prescription-${rx.issuedAt.slice(0, 10)}.pdf"`,
      "cache-control": "private, no-store",
    },
  });
}
