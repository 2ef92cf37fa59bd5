/** The order form sent to the lab: practice letterhead, order reference, prescription, frame, lenses, PDs and heights. */
import { formatRx } from "~/lib/optics";
import { LENS_TYPE_LABEL, orderLabel } from "~/lib/orders/states";
import { loadLetterhead, PdfWriter } from "~/utils/pdf.server";
import type { OrderDetail } from "./orders.server";

const signed = (x: number | null | undefined, d = 2) =>
  x === null || x === undefined ? "" : `${x > 0 ? "+" : ""}${x.toFixed(d)}`;
const mm = (x: number | null | undefined) => (x === null || x === undefined ? "-" : `${x.toFixed(1)} mm`);

function rxCells(e: OrderDetail["rx"]["right"]): string[] {
  if (!e) return ["-", "", "", "", "", ""];
  const [s, c, , a] = formatRx(e).split(" ");
  const prism = e.prismDioptres ? `${e.prismDioptres.toFixed(2)} base ${e.prismBase}` : "";
  return e.cylinder === 0
    ? [s ?? "", "DS", "", signed(e.addPower), prism]
    : [s ?? "", c ?? "", a ?? "", signed(e.addPower), prism];
}

export async function buildOrderPdf(d: OrderDetail): Promise<Uint8Array> {
  const title = d.order.kind === "spectacles" ? "Spectacle order" : "Contact-lens order";
  const pdf = await PdfWriter.create({
    title: `${title} ${orderLabel(d.order.number)}`,
    practice: await loadLetterhead(),
  });
  pdf.heading(`${title} ${orderLabel(d.order.number)}`, 16);
  pdf.keyValues([
    ["To", `${d.lab.name}${d.lab.accountRef ? ` (account ${d.lab.accountRef})` : ""}`],
    ["Patient", `${d.patient.firstName} ${d.patient.lastName}`],
    ["Ordered", d.order.createdAt.toISOString().slice(0, 10)],
    ["Prescription issued", `${d.rx.issuedAt.toISOString().slice(0, 10)} by ${d.rx.prescriberName}`],
  ]);
  if (d.order.kind === "spectacles") {
    pdf.table({
      columns: [
        { header: "Eye", width: 60 },
        { header: "Sphere", width: 65, align: "right" },
        { header: "Cylinder", width: 65, align: "right" },
        { header: "Axis", width: 45, align: "right" },
        { header: "Add", width: 55, align: "right" },
        { header: "Prism", width: 105 },
      ],
      rows: [
        ["Right", ...rxCells(d.rx.right)],
        ["Left", ...rxCells(d.rx.left)],
      ],
    });
    pdf.table({
      columns: [
        { header: "Eye", width: 60 },
        { header: "Monocular PD", width: 110, align: "right" },
        { header: "Fitting height", width: 110, align: "right" },
      ],
      rows: [
        ["Right", mm(d.order.pdRightMm), mm(d.order.heightRightMm)],
        ["Left", mm(d.order.pdLeftMm), mm(d.order.heightLeftMm)],
      ],
    });
    pdf.keyValues([
      ["Frame", d.order.frameLabel ?? "-"],
      ["Lens type", d.order.lensType ? LENS_TYPE_LABEL[d.order.lensType] : "-"],
      ["Material", d.order.lensMaterial ?? "-"],
      ["Coatings", d.order.coatings.length ? d.order.coatings.join(", ") : "None"],
      ["Tint", d.order.tint || "None"],
    ]);
  } else {
    const row = (side: "right" | "left", boxes: number | null) => {
      const e = d.rx[side];
      return [
        side === "right" ? "Right" : "Left",
        e ? formatRx(e) : "-",
        e?.baseCurveMm ? e.baseCurveMm.toFixed(2) : "",
        e?.diameterMm ? e.diameterMm.toFixed(1) : "",
        String(boxes ?? 0),
      ];
    };
    pdf.keyValues([["Lens", d.rx.lensName || "-"]]);
    pdf.table({
      columns: [
        { header: "Eye", width: 60 },
        { header: "Power", width: 160 },
        { header: "BC", width: 60, align: "right" },
        { header: "Dia.", width: 60, align: "right" },
        { header: "Boxes", width: 60, align: "right" },
      ],
      rows: [row("right", d.order.boxesRight), row("left", d.order.boxesLeft)],
    });
  }
  if (d.order.notes) pdf.keyValues([["Notes", d.order.notes]]);
  const remakes = d.events.filter((e) => e.toState === "remake");
  if (remakes.length) pdf.keyValues([["Remake", remakes.map((e) => e.reason).join("; ")]]);
  pdf.notes("For the lab", [
    "Please quote the order reference on the delivery note.",
    "Lenses are checked on arrival against this order with the tolerances of the practice's dispensing standard.",
  ]);
  return pdf.finish();
}
