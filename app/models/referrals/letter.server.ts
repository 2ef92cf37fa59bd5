/** The letter's content from the stored referral, and its PDF. */
import { ACUITY_CORRECTION_LABEL } from "~/lib/exam/sections";
import { describeTimeFrame, findingKey, promptValue, timeFramesOf, URGENCY_LABEL } from "~/lib/referrals";
import { storage } from "~/utils/storage.server";
import { buildLetterPdf, type LetterInput } from "./letter-pdf.server";
import { EYE_WORD, formatDate, practice, referenceOf } from "./common.server";
import { sectionTitle } from "~/lib/exam/section-list";
import type { LoadedReferral } from "./drafts.server";
import { type LetterSnapshot, triageLines } from "./snapshot.server";

const SEX = { female: "Female", male: "Male", other: "Other", unknown: "Not recorded" } as const;

/** Allergies as the letter states them: the recorded text, "None known" when so recorded, else "Not recorded". */
export function allergyLine(d: LetterSnapshot["patientDetails"]): string {
  const text = d?.allergies?.trim() ?? "";
  if (text) return /^(none( known)?|nka|nkda|no known( drug)? allergies)\.?$/i.test(text) ? "None known" : text;
  return d?.noKnownAllergies ? "None known" : "Not recorded";
}

/** The letter's content from the stored referral (the snapshot, the edited text, the people). */
export async function letterInput(
  r: LoadedReferral,
  opts: { withAttachmentBytes?: boolean } = {},
): Promise<LetterInput> {
  const p = await practice();
  const tz = p.timeZone;
  const s = r.referral.snapshot as LetterSnapshot;
  const selected = new Set(r.referral.selectedFindings);
  const yes = (b: boolean | null | undefined, word: string) => (b ? word : "");
  const frames = timeFramesOf(p);
  const days = r.referral.timeFrameDays ?? frames[r.referral.urgency];
  const fmt = (n: number) => String(n);
  const measurements: LetterInput["measurements"] = [];
  if (s.acuity.length)
    measurements.push({
      title: sectionTitle("acuity"),
      columns: ["Eye", "Distance", "Correction", "VA as recorded", "logMAR"],
      widths: [1, 1, 1.6, 1.4, 1],
      rows: s.acuity.map((a) => [
        EYE_WORD[a.eye],
        a.distance === "distance" ? "Distance" : "Near",
        ACUITY_CORRECTION_LABEL[a.correction],
        a.notation,
        a.logMar.toFixed(2),
      ]),
    });
  if (s.refraction.length)
    measurements.push({
      title: `Current refraction (${s.refraction[0]!.kind})`,
      columns: ["Eye", "Sphere / cylinder / axis", "Add", "Prism", "VA"],
      widths: [0.8, 2.2, 0.8, 1.4, 1],
      rows: s.refraction.map((x) => [
        EYE_WORD[x.eye],
        x.text,
        x.add !== null ? `+${x.add.toFixed(2)}` : "—",
        x.prism ?? "—",
        x.va ?? "—",
      ]),
    });
  if (s.iop.length) {
    // Each eye's mean of this visit's readings, then every reading with its method and time.
    const meanOf = (eye: "right" | "left") => {
      const xs = s.iop.filter((i) => i.eye === eye).map((i) => i.mmHg);
      return xs.length > 1
        ? ` (mean of ${xs.length}: ${(Math.round((xs.reduce((a, b) => a + b, 0) / xs.length) * 10) / 10).toString()} mmHg)`
        : "";
    };
    measurements.push({
      title: `Intraocular pressure at this exam${meanOf("right") ? `; right${meanOf("right")}` : ""}${meanOf("left") ? `; left${meanOf("left")}` : ""}`,
      columns: ["Eye", "Reading", "IOP", "Method", "Time"],
      widths: [0.8, 0.8, 1, 2, 1],
      rows: s.iop.map((i, k) => [EYE_WORD[i.eye], String(i.reading ?? k + 1), `${fmt(i.mmHg)} mmHg`, i.method, i.time]),
    });
  }
  if (s.previousIop?.length)
    measurements.push({
      title: `Intraocular pressure at the previous exam (${formatDate(new Date(s.previousIop[0]!.examinedAt), tz)})`,
      columns: ["Eye", "IOP", "Method", "Time"],
      widths: [0.8, 1, 2, 1],
      rows: s.previousIop.map((i) => [EYE_WORD[i.eye], `${fmt(i.mmHg)} mmHg`, i.method, i.time]),
    });
  else if (s.iop.length)
    measurements.push({
      title: "Intraocular pressure at the previous exam",
      columns: ["Previous values"],
      widths: [1],
      rows: [["No earlier pressures on record at this practice"]],
    });
  if (s.cornealThickness?.length)
    measurements.push({
      title: "Central corneal thickness",
      columns: ["Eye", "Thickness"],
      widths: [0.8, 1.5],
      rows: s.cornealThickness.map((c) => [EYE_WORD[c.eye], `${c.micrometres} µm`]),
    });
  if (s.pupils?.length)
    measurements.push({
      title: sectionTitle("pupils"),
      columns: ["Eye", "Equal and reactive", "RAPD", "Anisocoria", "Size", "Notes"],
      widths: [0.8, 1.2, 0.8, 1.4, 0.7, 2],
      rows: s.pupils.map((p) => [
        EYE_WORD[p.eye],
        p.equalReactive ? "Yes" : "No",
        p.rapd ? "Present" : "None",
        p.larger ? "This pupil larger" : "—",
        p.sizeMm !== null ? `${fmt(p.sizeMm)} mm` : "—",
        p.notes || "—",
      ]),
    });
  if (s.anteriorChamber?.length)
    measurements.push({
      title: sectionTitle("ac"),
      columns: ["Eye", "Van Herick grade", "Cells", "Hyphaema", "Hypopyon", "Notes"],
      widths: [0.8, 1.1, 0.8, 0.9, 0.9, 2],
      rows: s.anteriorChamber.map((a) => [
        EYE_WORD[a.eye],
        a.vanHerick !== null ? String(a.vanHerick) : "—",
        a.cells ?? "—",
        a.hyphaema ? "Present" : "None",
        a.hypopyon ? "Present" : "None",
        a.notes || "—",
      ]),
    });
  if (s.discs?.length)
    measurements.push({
      title: sectionTitle("disc"),
      columns: ["Eye", "Vertical C/D", "Margins", "Swelling", "Haemorrhage", "Pallor", "Notes"],
      widths: [0.8, 0.9, 0.9, 0.8, 1, 0.7, 1.9],
      rows: s.discs.map((d) => [
        EYE_WORD[d.eye],
        d.verticalCd !== null ? d.verticalCd.toFixed(2) : "—",
        d.margins ?? "—",
        d.swelling ? "Present" : "None",
        d.haemorrhage ? "Present" : "None",
        d.pallor ? "Present" : "None",
        d.notes || "—",
      ]),
    });
  if (s.fundus?.length)
    measurements.push({
      title: `Fundus: ${sectionTitle("fundus").toLowerCase()}`,
      columns: ["Eye", "Findings", "Macula", "Periphery"],
      widths: [0.8, 2.6, 1.6, 1.6],
      rows: s.fundus.map((f) => [
        EYE_WORD[f.eye],
        [
          yes(f.vitreousDetachment, "posterior vitreous detachment"),
          yes(f.vitreousPigment, "pigment in the anterior vitreous"),
          yes(f.retinalBreak, "retinal break"),
          yes(f.retinalDetachment, "retinal detachment"),
          yes(f.drusen, "drusen"),
          yes(f.suspectedWetAmd, "suspected wet AMD"),
        ]
          .filter(Boolean)
          .join(", ") || "None of those listed",
        f.maculaNotes || "—",
        f.peripheryNotes || "—",
      ]),
    });
  if (s.dilations?.length)
    measurements.push({
      title: sectionTitle("dilation"),
      columns: ["Drug", "Strength", "Eye", "Instilled"],
      widths: [1.6, 0.8, 0.8, 1.6],
      rows: s.dilations.map((d) => [
        d.drug,
        `${fmt(d.strengthPercent)}%`,
        EYE_WORD[d.eye as "both"] ?? d.eye,
        formatDate(new Date(d.instilledAt), tz, {
          day: "numeric",
          month: "short",
          year: "numeric",
          hour: "2-digit",
          minute: "2-digit",
        }),
      ]),
    });
  if (s.colour.length)
    measurements.push({
      title: sectionTitle("colour"),
      columns: ["Eye", "Test", "Plates read", "Result", "Notes"],
      widths: [0.8, 2.2, 1, 1.2, 1.6],
      rows: s.colour.map((c) => [
        EYE_WORD[c.eye],
        c.test,
        c.platesShown !== null ? `${c.platesCorrect ?? "—"} of ${c.platesShown}` : "—",
        c.result,
        c.notes || "—",
      ]),
    });
  if (s.fields.length)
    measurements.push({
      title: sectionTitle("fields"),
      columns: ["Eye", "Method", "Blind-spot centre (x, y)", "Blind-spot size (w × h)", "Defect", "Reliability"],
      widths: [0.8, 1.9, 1.5, 1.4, 1.6, 1],
      rows: s.fields.map((f) => [
        EYE_WORD[f.eye],
        f.method,
        f.blindSpot ? `${fmt(f.blindSpot.xDeg)}°, ${fmt(f.blindSpot.yDeg)}°` : "—",
        f.blindSpot ? `${fmt(f.blindSpot.widthDeg)}° × ${fmt(f.blindSpot.heightDeg)}°` : "—",
        f.defectPresent ? f.defects || "Defect recorded" : f.defects || "None recorded",
        f.reliability ?? "—",
      ]),
    });
  const rf = s.redFlags;
  const symptoms: string[] = [];
  if (rf) {
    const eyeOf = (v: string | null) => (v ? ` (${v === "both" ? "both eyes" : `${v} eye`})` : "");
    const list: [string | null, string][] = [
      [rf.flashes, "flashes"],
      [rf.newFloaters, "new floaters"],
      [rf.curtain, "a shadow or curtain over the vision"],
      [rf.suddenLoss, "sudden loss of vision"],
      [rf.severePain, "severe eye pain"],
      [rf.redEye, "red eye"],
      [rf.distortion, "new distortion"],
    ];
    for (const [v, word] of list) if (v) symptoms.push(`${word}${eyeOf(v)}`);
    if (rf.newDiplopia) symptoms.push("new double vision");
    if (rf.gcaSymptoms) symptoms.push("headache with features of giant cell arteritis");
    else if (rf.headache) symptoms.push("headache");
  }
  if (s.diagnoses.length)
    measurements.push({
      title: "Diagnoses (ICD-10)",
      columns: ["Code", "Diagnosis", "Eye"],
      widths: [0.8, 3, 0.8],
      rows: s.diagnoses.map((d) => [d.code, d.label, EYE_WORD[d.eye as "both"] ?? d.eye]),
    });

  const attachments: LetterInput["attachments"] = [];
  for (const a of r.attachments) {
    let bytes: Buffer | null = null;
    if (opts.withAttachmentBytes !== false && ["application/pdf", "image/jpeg", "image/png"].includes(a.contentType))
      bytes = await storage.get(a.storageKey).catch(() => null);
    attachments.push({ name: a.originalName, contentType: a.contentType, description: a.description, bytes });
  }
  const rec = r.recipient;
  return {
    practice: {
      name: p.name,
      lines: [p.addressLine1, p.addressLine2, [p.city, p.postcode].filter(Boolean).join(" ")].filter(Boolean),
      phone: p.phone,
      email: p.email,
    },
    dated: formatDate(r.referral.sentAt ?? r.referral.queuedAt ?? new Date(), tz),
    reference: referenceOf(r.referral.number),
    recipient: rec
      ? {
          name: rec.name,
          clinic: rec.clinic,
          lines: [rec.addressLine1, rec.addressLine2, [rec.city, rec.postcode].filter(Boolean).join(" ")].filter(
            Boolean,
          ),
          email: rec.email,
        }
      : { name: "(recipient not chosen yet)", clinic: "", lines: [], email: null },
    patient: {
      name: `${r.patient.firstName} ${r.patient.lastName}`,
      dateOfBirth: formatDate(r.patient.dateOfBirth, tz, { day: "numeric", month: "short", year: "numeric" }),
      sex: SEX[r.patient.sex],
      reference: r.patient.id.slice(0, 8).toUpperCase(),
      address: [r.patient.addressLine1, r.patient.city, r.patient.postcode].filter(Boolean).join(", "),
    },
    urgency: {
      label: URGENCY_LABEL[r.referral.urgency],
      timeFrame: describeTimeFrame(r.referral.urgency, days),
      proposed: r.referral.proposedUrgency ? URGENCY_LABEL[r.referral.proposedUrgency] : null,
      overrideReason: r.referral.urgencyOverrideReason,
    },
    triage: triageLines(s.triage).map((t) => ({ urgency: URGENCY_LABEL[t.urgency] ?? t.urgency, text: t.text })),
    clinical: {
      symptoms: rf
        ? symptoms.length
          ? `Reported: ${symptoms.join(", ")}.${rf.notes ? ` ${rf.notes}` : ""}`
          : `Red-flag symptoms asked about and denied.${rf.notes ? ` ${rf.notes}` : ""}`
        : "",
      medications: (s.patientDetails?.medications || s.history?.medications || "").trim() || "None recorded",
      allergies: allergyLine(s.patientDetails),
      gp: s.patientDetails?.gp || "Not recorded",
      phone: s.patientDetails?.phone ?? "Not recorded",
    },
    reason: r.referral.reason,
    body: r.referral.body,
    findings: s.prompts
      .filter((x) => selected.has(findingKey(x)))
      .map((x) => ({ finding: x.message, eye: EYE_WORD[x.eye as "both"] ?? x.eye, value: promptValue(x) })),
    additionalFindings: r.referral.additionalFindings,
    assessmentPlan: s.assessment ?? null,
    measurements,
    history: r.referral.relevantHistory,
    exam: {
      examinedOn: formatDate(new Date(s.examinedAt), tz),
      signedOn: s.signedAt ? formatDate(new Date(s.signedAt), tz) : null,
    },
    optometrist: {
      name: r.author.name,
      licence: r.author.licenceNumber ?? "",
      role: r.author.role === "owner" ? "Optometrist, practice owner" : "Optometrist",
    },
    attachments,
  };
}

export async function renderLetter(r: LoadedReferral) {
  return buildLetterPdf(await letterInput(r));
}

// ------------------------------------------------------------------------------- sending
