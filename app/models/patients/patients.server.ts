import { and, asc, count, desc, eq, isNull, lt, ne, not, or, sql, type SQL } from "drizzle-orm";
import { audit, auditCte, type AuditEntry } from "~/utils/audit.server";
import { patients } from "~/db/schema";
import { db } from "~/utils/db.server";
import { notFound } from "~/utils/failure.server";
import type { SessionUser } from "~/utils/session.server";
import { isUuid, type ListQuery } from "./patient-schema";

/** Months without an exam after which a patient counts as due (common practice: a two-yearly routine exam for adults). */
export const DEFAULT_RECALL_MONTHS = 24;

const DATE_PATTERNS: [RegExp, (m: RegExpMatchArray) => string][] = [
  [/^(\d{4})-(\d{1,2})-(\d{1,2})$/, (m) => `${m[1]}-${m[2]!.padStart(2, "0")}-${m[3]!.padStart(2, "0")}`],
  [/^(\d{1,2})[/.-](\d{1,2})[/.-](\d{4})$/, (m) => `${m[3]}-${m[2]!.padStart(2, "0")}-${m[1]!.padStart(2, "0")}`],
];

/** A typed date of birth (2011-03-09, 9/3/2011, 09.03.2011; day before month) as ISO, or null. */
export function parseDobQuery(q: string): string | null {
  for (const [re, toIso] of DATE_PATTERNS) {
    const m = q.match(re);
    if (m) {
      const iso = toIso(m);
      const d = new Date(`${iso}T00:00:00Z`);
      if (!Number.isNaN(d.getTime()) && d.toISOString().slice(0, 10) === iso) return iso;
    }
  }
  return null;
}

const escapeLike = (s: string) => s.replace(/[\\%_]/g, (c) => `\\${c}`);

/**
 * The WHERE clause of a patient search: a date of birth, or every word found somewhere in the
 * name, e-mail or phone digits (answered by the trigram index on search_text).
 */
export function searchCondition(q: string): SQL | undefined {
  const text = q.trim();
  if (!text) return undefined;
  const dob = parseDobQuery(text);
  if (dob) return eq(patients.dateOfBirth, dob);
  const words = text
    .toLowerCase()
    .split(/\s+/)
    .map((w) => (/^[+\d()\-.]+$/.test(w) ? w.replace(/\D/g, "") : w))
    .filter(Boolean)
    .slice(0, 5);
  if (!words.length) return undefined;
  return and(...words.map((w) => sql`${patients.searchText} like ${`%${escapeLike(w)}%`}`));
}

export type PatientHit = {
  id: string;
  firstName: string;
  lastName: string;
  dateOfBirth: string;
  phone: string | null;
  email: string | null;
};

/** The columns a patient is shown by in searches, pickers and lists (a `PatientHit`). */
export const patientHitColumns = {
  id: patients.id,
  firstName: patients.firstName,
  lastName: patients.lastName,
  dateOfBirth: patients.dateOfBirth,
  phone: patients.phone,
  email: patients.email,
};

/** The typed words of a name search (not a date, not a phone number), lower-cased. */
function nameWords(q: string) {
  if (parseDobQuery(q.trim())) return [];
  return q
    .trim()
    .toLowerCase()
    .split(/\s+/)
    .filter((w) => w && !/^[+\d()\-.]+$/.test(w))
    .slice(0, 5);
}

/** Matches are counted at most up to this many; beyond it the count reads "more than 1,000". */
export const SEARCH_COUNT_CAP = 1000;

/**
 * How far a search counts from `offset`: five pages ahead (at most SEARCH_COUNT_CAP). A short or
 * common fragment matches thousands, and counting them all would cost more than the page; the list
 * says "100+ not shown yet" and counts further as the reader asks for more.
 */
const countCapFor = (offset: number, limit: number) => Math.min(SEARCH_COUNT_CAP, offset + limit * 5);

/**
 * One page of a patient search, best first: surnames equal to a typed word, then surnames that
 * begin with one, then every other match, each group by name. With the number of matches (up to
 * `countCapFor`), so a short list says how many more there are.
 */
export async function searchPatientsPage(
  q: string,
  { limit = 8, offset = 0 }: { limit?: number; offset?: number } = {},
): Promise<{ results: PatientHit[]; total: number; totalIsExact: boolean }> {
  const where = searchCondition(q);
  if (!where) return { results: [], total: 0, totalIsExact: true };
  const words = nameWords(q);
  // Byte order, as patients_surname_prefix_idx keeps them: a typed prefix is a range of the index.
  const surname = sql`lower(${patients.lastName}) collate "C"`;
  const nameOrder = [
    surname,
    sql`lower(${patients.firstName}) collate "C"`,
    asc(patients.dateOfBirth),
    asc(patients.id),
  ];
  const cap = countCapFor(offset, limit);
  const countMatches = db.select({ n: count() }).from(
    db
      .select({ one: sql`1` })
      .from(patients)
      .where(where)
      .limit(cap + 1)
      .as("capped"),
  );
  if (!words.length) {
    const [results, [counted]] = await Promise.all([
      db
        .select(patientHitColumns)
        .from(patients)
        .where(where)
        .orderBy(...nameOrder)
        .limit(limit)
        .offset(offset),
      countMatches,
    ]);
    const n = counted?.n ?? 0;
    return { results, total: Math.min(n, cap), totalIsExact: n <= cap };
  }
  // Surnames beginning with a typed word come first, read in order from the index (with one word
  // an equal surname sorts before every longer one, so name order is also "equal, then begins
  // with"); the other matches follow, only when those do not fill the page. The work is the page,
  // not the number of matches.
  const prefix = or(...words.map((w) => sql`${surname} like ${`${escapeLike(w)}%`}`))!;
  const rank = words.length > 1 ? [sql`case when lower(${patients.lastName}) in ${words} then 0 else 1 end`] : [];
  const need = offset + limit;
  const [first, [counted]] = await Promise.all([
    db
      .select(patientHitColumns)
      .from(patients)
      .where(and(where, prefix))
      .orderBy(...rank, ...nameOrder)
      .limit(need),
    countMatches,
  ]);
  let results = first.slice(offset);
  if (first.length < need) {
    const rest = await db
      .select(patientHitColumns)
      .from(patients)
      .where(and(where, not(prefix)))
      .orderBy(...nameOrder)
      .limit(limit - results.length)
      .offset(Math.max(0, offset - first.length));
    results = [...results, ...rest];
  }
  const n = counted?.n ?? 0;
  return { results, total: Math.min(n, cap), totalIsExact: n <= cap };
}

export async function searchPatients(q: string, limit = 8): Promise<PatientHit[]> {
  return (await searchPatientsPage(q, { limit })).results;
}

function filterCondition(filter: ListQuery["filter"]): SQL | undefined {
  if (filter === "never") return isNull(patients.lastExamAt);
  if (filter === "due") return lt(patients.lastExamAt, sql`now() - make_interval(months => ${DEFAULT_RECALL_MONTHS})`);
  return undefined;
}

export async function listPatients(query: ListQuery) {
  const where = and(searchCondition(query.q), filterCondition(query.filter));
  const d = query.dir === "desc" ? desc : asc;
  const order =
    query.sort === "dob"
      ? [d(patients.dateOfBirth), d(patients.id)]
      : query.sort === "lastExam"
        ? [
            // Exactly patients_last_exam_desc_idx's order (or its reverse), nulls included.
            ...(query.dir === "desc"
              ? [sql`${patients.lastExamAt} desc nulls last`, sql`${patients.id} desc nulls last`]
              : [sql`${patients.lastExamAt} asc nulls first`, sql`${patients.id} asc nulls first`]),
          ]
        : query.sort === "created"
          ? [d(patients.createdAt), d(patients.id)]
          : query.q
            ? [
                d(sql`lower(${patients.lastName})`),
                d(sql`lower(${patients.firstName})`),
                d(patients.dateOfBirth),
                d(patients.id),
              ] // see searchPatients
            : [d(patients.lastName), d(patients.firstName), d(patients.dateOfBirth), d(patients.id)];
  const cap = (query.page + 10) * query.size + 1;
  // The page's ids first, then their rows: the ids come from the sort's own index alone (an
  // index-only scan), so a page far down the list skips thousands of index entries, not
  // thousands of table rows (at 100,000 patients, page 150 by date of birth: 11 ms → 5 ms).
  const pageIds = db
    .select({ id: patients.id })
    .from(patients)
    .where(where)
    .orderBy(...order)
    .limit(query.size)
    .offset((query.page - 1) * query.size)
    .as("page_ids");
  const [rows, [total]] = await Promise.all([
    db
      .select({ ...patientHitColumns, lastExamAt: patients.lastExamAt })
      .from(patients)
      .innerJoin(pageIds, eq(pageIds.id, patients.id))
      .orderBy(...order),
    // Counted only up to ten pages past this one: an exact count of a large table costs more than
    // the page itself, and "more than 2,750" is all a pager needs.
    db.select({ n: count() }).from(
      db
        .select({ one: sql`1` })
        .from(patients)
        .where(where)
        .limit(cap)
        .as("capped"),
    ),
  ]);
  const n = total?.n ?? 0;
  return { rows, total: Math.min(n, cap - 1), totalIsExact: n < cap };
}

/** What both registration paths (the full page and the booking form) say when they find a likely duplicate. */
export const DUPLICATE_MESSAGE =
  "A patient with this name and date of birth is already registered. Choose that patient, or confirm that this is a different person.";

/**
 * The one duplicate check of every registration: unless the user has confirmed a different
 * person ("yes"), the patients with the same name and date of birth, else none.
 */
export async function duplicatesBlockingRegistration(
  input: { firstName: string; lastName: string; dateOfBirth: string },
  confirmDuplicate: unknown,
) {
  if (confirmDuplicate === "yes" || confirmDuplicate === true) return [];
  return findDuplicates(input);
}

/** Patients with the same name (case-insensitive) and date of birth: likely the same person. */
export async function findDuplicates(
  input: { firstName: string; lastName: string; dateOfBirth: string },
  excludeId?: string,
) {
  return db
    .select(patientHitColumns)
    .from(patients)
    .where(
      and(
        eq(patients.dateOfBirth, input.dateOfBirth),
        sql`lower(${patients.lastName}) = ${input.lastName.toLowerCase()}`,
        sql`lower(${patients.firstName}) = ${input.firstName.toLowerCase()}`,
        excludeId ? ne(patients.id, excludeId) : undefined,
      ),
    )
    .limit(5);
}

/** The whole patient row for an id from the URL; a malformed or unknown id is 404. */
export async function patientOr404(id: string | undefined) {
  if (!isUuid(id)) notFound();
  const [p] = await db.select().from(patients).where(eq(patients.id, id!)).limit(1);
  if (!p) notFound();
  return p;
}

/**
 * The patient (else 404) and, in the same statement, the audit row of the read (when the patient
 * exists): one round trip, and the record of the read commits with it.
 */
export async function patientReadAudited(
  id: string | undefined,
  entry: Omit<AuditEntry, "entityType" | "entityId" | "patientId">,
) {
  if (!isUuid(id)) notFound();
  const audited = auditCte(
    { ...entry, entityType: "patient", entityId: id!, patientId: id! },
    sql`exists (select 1 from ${patients} where ${patients.id} = ${id!})`,
  );
  const [p] = await db.with(audited).select().from(patients).where(eq(patients.id, id!)).limit(1);
  if (!p) notFound();
  return p;
}

/** A patient's details as a registration or an edit writes them (an empty e-mail or phone is stored as none). */
export type PatientDetails = Omit<
  typeof patients.$inferInsert,
  "id" | "allergies" | "medications" | "noKnownAllergies" | "createdAt" | "updatedAt"
>;
/** The clinical fields of the patient form, written only by clinical roles. */
export type PatientClinicalFields = Pick<
  typeof patients.$inferInsert,
  "allergies" | "medications" | "noKnownAllergies"
>;

const detailsRow = (details: PatientDetails, clinical: PatientClinicalFields | null) => ({
  ...details,
  email: details.email || null,
  phone: details.phone || null,
  ...(clinical ? clinical : {}),
});

/**
 * Registers a patient and writes the audit row (`audited` says from where) in one transaction;
 * the clinical fields only when given. Returns the new patient's id, name, date of birth and e-mail.
 */
export async function registerPatient(
  user: Pick<SessionUser, "id">,
  details: PatientDetails,
  clinical: PatientClinicalFields | null,
  audited: { action: string; detail: Record<string, unknown> },
  request: Request,
) {
  return db.transaction(async (tx) => {
    const [row] = await tx.insert(patients).values(detailsRow(details, clinical)).returning({
      id: patients.id,
      firstName: patients.firstName,
      lastName: patients.lastName,
      dateOfBirth: patients.dateOfBirth,
      email: patients.email,
    });
    await audit(
      {
        action: audited.action,
        actorUserId: user.id,
        entityType: "patient",
        entityId: row!.id,
        patientId: row!.id,
        detail: audited.detail,
        request,
      },
      tx,
    );
    return row!;
  });
}

/** Saves a patient's details (the clinical fields only when given) and audits it, in one transaction. */
export async function updatePatient(
  user: Pick<SessionUser, "id">,
  patientId: string,
  details: PatientDetails,
  clinical: PatientClinicalFields | null,
  request: Request,
) {
  await db.transaction(async (tx) => {
    await tx
      .update(patients)
      .set({ ...detailsRow(details, clinical), updatedAt: new Date() })
      .where(eq(patients.id, patientId));
    await audit(
      {
        action: "patient.updated",
        actorUserId: user.id,
        entityType: "patient",
        entityId: patientId,
        patientId,
        detail: { clinicalFields: clinical !== null },
        request,
      },
      tx,
    );
  });
}
