/**
 * Test data for integration tests, written straight into the test database: fictional patients,
 * exams, fees and referral recipients with unique names, so every test (and every test file) works
 * on rows of its own. Import only from test files (after setup.ts has set the environment).
 */
import { randomBytes } from "node:crypto";
import { eq } from "drizzle-orm";
import { examRefractions, exams, feeItems, patients, referralRecipients } from "~/db/schema";
import { db } from "~/utils/db.server";
import { DEMO_EMAIL, uniqueEmail, userByEmail } from "./helpers";

/** A short random tag for names that must not repeat. */
export const uniq = () => randomBytes(4).toString("hex");

type PatientInsert = typeof patients.$inferInsert;

/** A fictional patient with a unique surname and e-mail address; any column can be given. */
export async function newPatient(over: Partial<PatientInsert> = {}) {
  const [p] = await db
    .insert(patients)
    .values({
      firstName: "Test",
      lastName: `Patient-${uniq()}`,
      dateOfBirth: "1980-01-01",
      email: uniqueEmail("pt"),
      ...over,
    })
    .returning();
  return p!;
}

type RefractionInsert = Omit<typeof examRefractions.$inferInsert, "examId">;

/**
 * An exam by the demo optometrist, of a new patient unless `patientId` is given: in progress, or
 * signed with `signed: true`; with refraction rows when given.
 */
export async function newExam(
  opts: {
    patient?: Partial<PatientInsert>;
    patientId?: string;
    signed?: boolean;
    examinedAt?: Date;
    refractions?: RefractionInsert[];
  } = {},
) {
  const optom = await userByEmail(DEMO_EMAIL.optometrist);
  const patient = opts.patientId
    ? (await db.select().from(patients).where(eq(patients.id, opts.patientId)))[0]!
    : await newPatient({ email: null, ...opts.patient });
  const [exam] = await db
    .insert(exams)
    .values({
      patientId: patient.id,
      optometristId: optom.id,
      ...(opts.examinedAt ? { examinedAt: opts.examinedAt } : {}),
      ...(opts.signed
        ? { status: "signed" as const, signedAt: opts.examinedAt ?? new Date(), signedById: optom.id }
        : {}),
    })
    .returning();
  if (opts.refractions?.length)
    await db.insert(examRefractions).values(opts.refractions.map((r) => ({ ...r, examId: exam!.id })));
  return { patient, exam: exam!, params: { patientId: patient.id, examId: exam!.id }, optometrist: optom };
}

/** A fee with a unique code (`code` plus a random tag). */
export async function newFee(
  code: string,
  priceMinor: number,
  taxCategory: "standard" | "exempt" = "exempt",
  kind: "service" | "item" = "service",
) {
  const unique = `${code}-${randomBytes(3).toString("hex")}`.toUpperCase();
  const [f] = await db
    .insert(feeItems)
    .values({ code: unique, description: `${code} for tests`, priceMinor, taxCategory, kind })
    .returning();
  return f!;
}

/** A fictional ophthalmologist to refer to: by e-mail, or by post when `email` is null. */
export async function newRecipient(email: string | null = uniqueEmail("eye-surgeon")) {
  const [r] = await db
    .insert(referralRecipients)
    .values({
      name: "Dr Test Surgeon",
      clinic: "Test Eye Unit",
      specialty: "Glaucoma",
      email,
      preferredDelivery: email ? "email" : "post",
      addressLine1: "1 Test Road",
      city: "Testham",
      postcode: "TT1 1TT",
    })
    .returning();
  return r!;
}
