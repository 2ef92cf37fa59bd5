/** A referral's snapshot of the signed exam, triage's proposal in plain words, and the letter's pre-filled text. */
import { and, desc, eq, sql } from "drizzle-orm";
import { examIop, exams, patients, users, type ReferralSnapshot } from "~/db/schema";
import {
  COLOUR_RESULTS,
  COLOUR_TESTS,
  FIELD_METHODS,
  IOP_METHODS,
  REFRACTION_LABEL,
  RELIABILITY,
  type RefractionKind,
} from "~/lib/exam/sections";
import { formatRx } from "~/lib/optics";
import { findingKey, type Urgency } from "~/lib/referrals";
import type { Findings } from "~/models/exams/findings.server";
import { loadExam, promptsFor, storedTriage } from "~/models/exams/exam.server";
import { allOf, db, type Tx } from "~/utils/db.server";
import { formatDate } from "./common.server";

/**
 * What the letter carries beyond the stored exam snapshot: the previous visit's pressures and
 * the patient's details as they were when the draft was made (kept in the same jsonb column).
 */
export type LetterSnapshot = ReferralSnapshot & {
  previousIop?: { examinedAt: string; eye: "right" | "left"; mmHg: number; method: string; time: string }[];
  patientDetails?: {
    phone: string | null;
    allergies: string;
    medications: string;
    noKnownAllergies: boolean | null;
    gp: string;
  };
};

const CELLS_WORDS: Record<string, string> = {
  none: "none",
  trace: "trace",
  "1+": "1+",
  "2+": "2+",
  "3+": "3+",
  "4+": "4+",
};
const DRUG_WORDS: Record<string, string> = {
  tropicamide: "Tropicamide",
  phenylephrine: "Phenylephrine",
  cyclopentolate: "Cyclopentolate",
  other: "Other",
};

/** The structured findings of an exam (red flags, pupils, anterior chamber, disc, fundus, dilation) for the snapshot. */
function findingsOf({ redFlags: f, pupils, anteriorChamber: ac, discs, fundus, dilations }: Findings) {
  const byEye = <T extends { eye: string }>(rows: T[]) =>
    [...rows].sort((a, b) => (a.eye === b.eye ? 0 : a.eye === "right" ? -1 : 1));
  return {
    redFlags: f
      ? {
          flashes: f.flashes,
          newFloaters: f.newFloaters,
          curtain: f.curtain,
          suddenLoss: f.suddenLoss,
          severePain: f.severePain,
          redEye: f.redEye,
          distortion: f.distortion,
          newDiplopia: f.newDiplopia,
          gcaSymptoms: f.gcaSymptoms,
          headache: f.headache,
          notes: f.notes,
        }
      : null,
    pupils: byEye(pupils).map((r) => ({
      eye: r.eye,
      equalReactive: r.equalReactive,
      rapd: r.rapd,
      larger: r.larger,
      sizeMm: r.sizeMm,
      notes: r.notes,
    })),
    anteriorChamber: byEye(ac).map((r) => ({
      eye: r.eye,
      vanHerick: r.vanHerick,
      cells: r.cells ? (CELLS_WORDS[r.cells] ?? r.cells) : null,
      hyphaema: r.hyphaema,
      hypopyon: r.hypopyon,
      notes: r.notes,
    })),
    discs: byEye(discs).map((r) => ({
      eye: r.eye,
      verticalCd: r.verticalCd,
      margins: r.margins,
      swelling: r.swelling,
      haemorrhage: r.haemorrhage,
      pallor: r.pallor,
      notes: r.notes,
    })),
    fundus: byEye(fundus).map((r) => ({
      eye: r.eye,
      vitreousDetachment: r.vitreousDetachment,
      vitreousPigment: r.vitreousPigment,
      retinalBreak: r.retinalBreak,
      retinalDetachment: r.retinalDetachment,
      drusen: r.drusen,
      suspectedWetAmd: r.suspectedWetAmd,
      maculaNotes: r.maculaNotes,
      peripheryNotes: r.peripheryNotes,
    })),
    dilations: dilations.map((d) => ({
      drug: d.drug === "other" ? d.otherDrug || "Other" : (DRUG_WORDS[d.drug] ?? d.drug),
      strengthPercent: d.strengthPercent,
      eye: d.eye,
      instilledAt: d.instilledAt.toISOString(),
    })),
  };
}

/** The GP as one line: name, practice, address and telephone, as recorded. */
export function gpLine(p: { gpName: string; gpPractice: string; gpAddress: string; gpPhone: string }): string {
  return [p.gpName.trim(), p.gpPractice.trim(), p.gpAddress.trim(), p.gpPhone.trim() && `Tel ${p.gpPhone.trim()}`]
    .filter(Boolean)
    .join(", ");
}

/** The signed exam's measured values, as the letter will carry them. */
export async function snapshotOf(exam: typeof exams.$inferSelect, conn: Tx | typeof db = db): Promise<LetterSnapshot> {
  const s = await loadExam(exam.id, conn);
  const prompts = await promptsFor(exam.patientId, exam, s, conn);
  const [examiner] = await conn.select({ name: users.name }).from(users).where(eq(users.id, exam.optometristId));
  // The current refraction: the final one, else the subjective, else the habitual spectacles.
  const kinds: RefractionKind[] = ["final", "subjective", "cycloplegic", "retinoscopy", "autorefraction", "habitual"];
  const kind = kinds.find((k) => s.refractions.some((r) => r.kind === k));
  const refraction = kind
    ? s.refractions
        .filter((r) => r.kind === kind)
        .sort((a, b) => (a.eye === b.eye ? 0 : a.eye === "right" ? -1 : 1))
        .map((r) => ({
          kind: REFRACTION_LABEL[r.kind],
          eye: r.eye,
          text: formatRx({ sphere: r.sphere, cylinder: r.cylinder, axis: r.axis }),
          add: r.addPower,
          prism: r.prismDioptres !== null && r.prismBase ? `${r.prismDioptres} Δ base ${r.prismBase}` : null,
          va: r.vaNotation,
        }))
    : [];
  const order = { right: 0, left: 1, both: 2 } as const;
  // The findings come with the exam already read; a finding the triage engine refuses leaves no proposal.
  const extras = findingsOf(s.findings);
  const [triaged, [patientRow], [previous]] = await allOf(conn, [
    () => storedTriage(exam.id, conn),
    conn.select().from(patients).where(eq(patients.id, exam.patientId)),
    conn
      .select({ id: exams.id, examinedAt: exams.examinedAt })
      .from(exams)
      .where(
        and(
          eq(exams.patientId, exam.patientId),
          eq(exams.status, "signed"),
          sql`${exams.examinedAt} < ${exam.examinedAt}`,
        ),
      )
      .orderBy(desc(exams.examinedAt))
      .limit(1),
  ]);
  const previousIop = previous ? await conn.select().from(examIop).where(eq(examIop.examId, previous.id)) : [];
  return {
    ...extras,
    cornealThickness: [...s.cct]
      .sort((a, b) => order[a.eye] - order[b.eye])
      .map((c) => ({ eye: c.eye, micrometres: c.micrometres })),
    triage: triaged
      ? {
          urgency: triaged.urgency,
          reasons: triaged.reasons.map((r) => ({
            urgency: r.urgency,
            eye: r.eye,
            rule: r.rule,
            source: r.source,
          })),
        }
      : null,
    previousIop: previous
      ? [...previousIop]
          .sort((a, b) => order[a.eye] - order[b.eye] || a.reading - b.reading)
          .map((r) => ({
            examinedAt: previous.examinedAt.toISOString(),
            eye: r.eye,
            mmHg: r.mmHg,
            method: IOP_METHODS[r.method] ?? r.method,
            time: r.measuredTime.slice(0, 5),
          }))
      : [],
    patientDetails: patientRow
      ? {
          phone: patientRow.phone?.trim() || null,
          allergies: patientRow.allergies,
          medications: patientRow.medications,
          noKnownAllergies: patientRow.noKnownAllergies,
          gp: gpLine(patientRow),
        }
      : undefined,
    examinedAt: exam.examinedAt.toISOString(),
    signedAt: exam.signedAt?.toISOString() ?? null,
    examiner: examiner?.name ?? "",
    history: s.history
      ? {
          reason: s.history.reason,
          symptoms: s.history.symptoms,
          ocularHistory: s.history.ocularHistory,
          generalHistory: s.history.generalHistory,
          medications: s.history.medications,
          familyHistory: s.history.familyHistory,
        }
      : null,
    acuity: [...s.acuity]
      .sort(
        (a, b) =>
          a.distance.localeCompare(b.distance) ||
          order[a.eye] - order[b.eye] ||
          a.correction.localeCompare(b.correction),
      )
      .map((a) => ({
        eye: a.eye,
        distance: a.distance,
        correction: a.correction,
        notation: a.notation,
        logMar: a.logMar,
      })),
    refraction,
    iop: [...s.iop]
      .sort((a, b) => order[a.eye] - order[b.eye] || a.reading - b.reading)
      .map((r) => ({
        eye: r.eye,
        mmHg: r.mmHg,
        method: IOP_METHODS[r.method] ?? r.method,
        time: r.measuredTime.slice(0, 5),
        reading: r.reading,
      })),
    colour: [...s.colour]
      .sort((a, b) => order[a.eye] - order[b.eye])
      .map((r) => ({
        eye: r.eye,
        test: COLOUR_TESTS[r.test] ?? r.test,
        platesCorrect: r.platesCorrect,
        platesShown: r.platesShown,
        result: COLOUR_RESULTS[r.result] ?? r.result,
        notes: r.notes,
      })),
    fields: [...s.fields]
      .sort((a, b) => order[a.eye] - order[b.eye])
      .map((r) => ({
        eye: r.eye,
        method: (FIELD_METHODS[r.method] ?? r.method).replace(/ \(.*\)$/, ""),
        blindSpot:
          r.blindSpotXDeg !== null &&
          r.blindSpotYDeg !== null &&
          r.blindSpotWidthDeg !== null &&
          r.blindSpotHeightDeg !== null
            ? {
                xDeg: r.blindSpotXDeg,
                yDeg: r.blindSpotYDeg,
                widthDeg: r.blindSpotWidthDeg,
                heightDeg: r.blindSpotHeightDeg,
              }
            : null,
        defectPresent: r.defectPresent,
        defects: r.defects,
        reliability: r.reliability ? (RELIABILITY[r.reliability] ?? r.reliability) : null,
      })),
    diagnoses: s.diagnoses.map((d) => ({ code: d.code, label: d.label, eye: d.eye })),
    assessment: s.assessment ? { assessment: s.assessment.assessment, plan: s.assessment.plan } : null,
    prompts: prompts.map((p) => ({
      code: p.code,
      eye: p.eye,
      message: p.message,
      value: p.value,
      rule: p.rule,
      source: p.source,
    })),
  };
}

const EYE_PHRASE: Record<string, string> = { R: "right eye", L: "left eye", both: "both eyes" };

/** Triage reasons in plain words for the letter and the form: "Right eye: retinal detachment". */
export function triageLines(t: ReferralSnapshot["triage"]): { urgency: Urgency; text: string }[] {
  return (t?.reasons ?? []).map((r) => {
    const where = r.eye ? EYE_PHRASE[r.eye] : "";
    // "Retinal detachment" reads on after a colon as "retinal detachment"; "IOP …" keeps its capitals.
    const rule = /^[A-Z][a-z]/.test(r.rule) ? r.rule.charAt(0).toLowerCase() + r.rule.slice(1) : r.rule;
    return {
      urgency: r.urgency as Urgency,
      text: where ? `${where.charAt(0).toUpperCase()}${where.slice(1)}: ${rule}` : r.rule,
    };
  });
}

/** Triage's proposal for the form: the urgency (the stored one on a draft) and its reasons in plain words with their sources. */
export function triageProposal(snapshot: ReferralSnapshot, stored?: Urgency | null) {
  const lines = triageLines(snapshot.triage);
  const urgency = (stored !== undefined ? stored : (snapshot.triage?.urgency ?? null)) as Urgency | null;
  return {
    urgency,
    reasons: lines.map((l, i) => ({ urgency: l.urgency, text: l.text, source: snapshot.triage!.reasons[i]!.source })),
  };
}

/** The pre-filled letter text from the snapshot. */
export function prefill(
  snapshot: ReferralSnapshot,
  patient: { firstName: string; lastName: string; medications?: string; allergies?: string },
) {
  const h = snapshot.history;
  // The exam's history first; the chart's medications and allergies when the exam has none.
  const history = [
    h?.reason && `Reason for visit: ${h.reason}`,
    h?.symptoms && `Symptoms: ${h.symptoms}`,
    h?.ocularHistory && `Ocular history: ${h.ocularHistory}`,
    h?.generalHistory && `General health: ${h.generalHistory}`,
    (h?.medications || patient.medications) && `Medications: ${h?.medications || patient.medications}`,
    patient.allergies && `Allergies: ${patient.allergies}`,
    h?.familyHistory && `Family history: ${h.familyHistory}`,
  ]
    .filter(Boolean)
    .join("\n");
  const triaged = triageLines(snapshot.triage);
  const reason = (
    triaged.length
      ? triaged.map((t) => t.text)
      : snapshot.prompts.filter((p) => p.code !== "IOP_REPEAT").map((p) => p.message)
  )
    .join("; ")
    .slice(0, 600);
  const body = `Thank you for seeing ${patient.firstName} ${patient.lastName}, whom I examined on ${formatDate(new Date(snapshot.examinedAt), "UTC")}. The findings that prompted this referral and the measurements of the exam are set out below. I would be grateful for your assessment and advice on management.`;
  // Triage proposes the urgency; with no proposal the letter starts as routine.
  const proposed = (snapshot.triage?.urgency ?? null) as Urgency | null;
  const urgency: Urgency = proposed ?? "routine";
  // Requests to repeat a measurement are not findings to refer on; they start unticked.
  return {
    history,
    reason,
    body,
    urgency,
    proposedUrgency: proposed,
    selectedFindings: snapshot.prompts.filter((p) => p.code !== "IOP_REPEAT").map(findingKey),
  };
}
