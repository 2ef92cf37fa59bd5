/** What the exam page shows (signing, countersigning and addenda are in exam-signing.server.ts). */
import { asc, eq, inArray } from "drizzle-orm";
import { examCountersignatures, patients, users } from "~/db/schema";
import { localDateTime, type EyeKey } from "~/lib/exam/sections";
import type { SphCyl } from "~/lib/optics";
import { ageInYears as ageOn } from "~/lib/format";
import { BILLING_ROLES } from "~/models/billing/invoices.server";
import { prescriptionsOf } from "~/models/prescriptions/prescriptions.server";
import { catalogueLenses } from "~/models/prescriptions/contact-lenses.server";
import { documentsOf } from "~/models/patients/documents.server";
import { auditCte } from "~/utils/audit.server";
import { db } from "~/utils/db.server";
import type { SessionUser } from "~/utils/session.server";
import {
  type examFor,
  examSettings,
  formValues,
  loadExam,
  previousFinal,
  previousExamFindings,
  promptsFrom,
  sectionStatesOf,
  type ExamSections,
} from "./exam.server";
import { bestVaOf, proposalOf, triageInputOf } from "./triage.server";

type Exam = Awaited<ReturnType<typeof examFor>>;

/** Everything the exam page shows; reading it is audited. */
export async function examPageData(user: SessionUser, exam: Exam, request: Request) {
  // The read is recorded by the statement that reads the patient (one round trip, never lost);
  // everything that does not need the exam's sections is read beside them, in parallel.
  const patientRead = db
    .with(
      auditCte({
        action: "exam.read",
        actorUserId: user.id,
        entityType: "exam",
        entityId: exam.id,
        patientId: exam.patientId,
        request,
      }),
    )
    .select({
      id: patients.id,
      firstName: patients.firstName,
      lastName: patients.lastName,
      dateOfBirth: patients.dateOfBirth,
      allergies: patients.allergies,
      medications: patients.medications,
    })
    .from(patients)
    .where(eq(patients.id, exam.patientId));
  const sectionsRead = loadExam(exam.id);
  const [
    [patient],
    sections,
    prev,
    earlier,
    names,
    prescriptions,
    documents,
    settings,
    countersignatures,
    states,
    lenses,
  ] = await Promise.all([
    patientRead,
    sectionsRead,
    previousFinal(exam.patientId, exam.examinedAt),
    previousExamFindings(exam.patientId, exam.examinedAt),
    db
      .select({ id: users.id, name: users.name })
      .from(users)
      .where(inArray(users.id, [exam.optometristId, ...(exam.signedById ? [exam.signedById] : [])])),
    prescriptionsOf(exam.patientId, exam.id),
    documentsOf(exam.patientId, exam.id),
    examSettings(),
    db
      .select({
        clinicianId: examCountersignatures.clinicianId,
        clinician: users.name,
        note: examCountersignatures.note,
        signedAt: examCountersignatures.signedAt,
      })
      .from(examCountersignatures)
      .innerJoin(users, eq(users.id, examCountersignatures.clinicianId))
      .where(eq(examCountersignatures.examId, exam.id))
      .orderBy(asc(examCountersignatures.signedAt)),
    sectionStatesOf(exam.id),
    catalogueLenses(),
  ]);
  const prompts = promptsFrom(sections, earlier);
  const nameOf = (id: string | null) => names.find((u) => u.id === id)?.name ?? null;
  // A final refraction given by addendum after signing names that addendum's author and time.
  const addendumIds = new Set(sections.refractions.flatMap((r) => (r.addendumId ? [r.addendumId] : [])));
  const fromAddendum = sections.addenda.filter((a) => addendumIds.has(a.id));
  // Exams saved before triage was kept with them are triaged on reading, from what was just read.
  const triage = exam.triage ?? triageOnReading(exam, patient!.dateOfBirth, settings.timeZone, sections, earlier);
  return {
    patient: { ...patient!, age: ageOn(patient!.dateOfBirth) },
    exam: {
      id: exam.id,
      status: exam.status,
      examinedAt: exam.examinedAt.toISOString(),
      updatedAt: exam.updatedAt.toISOString(),
      signedAt: exam.signedAt?.toISOString() ?? null,
      optometrist: nameOf(exam.optometristId) ?? "",
      signedBy: nameOf(exam.signedById),
    },
    values: formValues(sections, settings.timeZone),
    diagnoses: sections.diagnoses.map((d) => `${d.code}|${d.eye}`),
    acuityNotation: settings.acuityNotation,
    timeZone: settings.timeZone,
    sectionStates: states,
    nowLocal: localDateTime(new Date(), settings.timeZone),
    triage,
    countersignatures: countersignatures.map((c) => ({
      clinician: c.clinician,
      note: c.note,
      signedAt: c.signedAt.toISOString(),
    })),
    isExaminer: user.id === exam.optometristId,
    /** Billing is the owner's and the front desk's; of the clinical roles only the owner bills. */
    canBill: (BILLING_ROLES as readonly string[]).includes(user.role),
    canCountersign:
      exam.status === "signed" &&
      user.id !== exam.optometristId &&
      !countersignatures.some((c) => c.clinicianId === user.id),
    hasFinal: sections.refractions.some((r) => r.kind === "final"),
    hasSubjective: sections.refractions.some((r) => r.kind === "subjective"),
    finalFromAddendum: fromAddendum[0]
      ? { author: fromAddendum[0].author, createdAt: fromAddendum[0].createdAt.toISOString() }
      : null,
    addenda: sections.addenda.map((a) => ({ ...a, createdAt: a.createdAt.toISOString() })),
    previous: prev && {
      examinedAt: prev.examinedAt,
      rows: Object.fromEntries(
        prev.rows.map((r) => [
          r.eye,
          { sphere: r.sphere, cylinder: r.cylinder, axis: r.axis, addPower: r.addPower, va: r.vaNotation },
        ]),
      ) as Partial<Record<EyeKey, SphCyl & { addPower: number | null; va: string | null }>>,
    },
    prompts,
    prescriptions,
    documents,
    lenses,
    fitted: sections.contactLens.find((c) => c.section === "cl_fitting")?.data ?? null,
    canSign: exam.status === "in_progress" && user.id === exam.optometristId,
  };
}

/** The triage proposal from sections already read; a finding the engine refuses leaves it unset. */
function triageOnReading(
  exam: Exam,
  dateOfBirth: string,
  timeZone: string,
  s: ExamSections,
  earlier: Awaited<ReturnType<typeof previousExamFindings>>,
) {
  return proposalOf(
    triageInputOf({
      examinedAt: exam.examinedAt,
      dateOfBirth,
      timeZone,
      iop: s.iop,
      redFlags: s.findings.redFlags,
      pupils: s.findings.pupils,
      anteriorChamber: s.findings.anteriorChamber,
      discs: s.findings.discs,
      fundus: s.findings.fundus,
      fields: s.fields,
      va: bestVaOf(s.acuity, s.refractions),
      previousVa: bestVaOf(earlier.acuity, earlier.refractions),
    }),
  );
}
