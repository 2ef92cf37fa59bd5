import { and, asc, ilike, or, sql, type SQL } from "drizzle-orm";
import { z } from "zod";
import type { Route } from "./+types/schedule-patients";
import { patients } from "~/db/schema";
import { errorJson, readBody, zodFieldErrors } from "~/routes/schedule/schedule-api.server";
import { audit } from "~/utils/audit.server";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { db } from "~/utils/db.server";

/** A typed date of birth: 2027-03-29 or 29/03/2027. */
function asDate(q: string): string | null {
  let m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(q);
  if (m) return q;
  m = /^(\d{1,2})[/.](\d{1,2})[/.](\d{4})$/.exec(q);
  if (m) return `${m[3]}-${m[2]!.padStart(2, "0")}-${m[1]!.padStart(2, "0")}`;
  return null;
}

/** GET /api/schedule-patients?q= — patients for the booking dialog: any part of the name, e-mail or phone, or the date of birth. */
export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, STAFF_ROLES);
  const q = (new URL(request.url).searchParams.get("q") ?? "").trim().slice(0, 100);
  if (q.length < 2) return Response.json({ q, results: [] });
  const dob = asDate(q);
  const words = q.toLowerCase().split(/\s+/).filter(Boolean);
  const digits = q.replace(/\D/g, "");
  const conditions: SQL[] = [];
  if (dob) conditions.push(sql`${patients.dateOfBirth} = ${dob}`);
  else {
    const nameMatch = and(
      ...words.map((w) => {
        const like = `%${w.replace(/[%_\\]/g, "\\$&")}%`;
        return or(ilike(patients.firstName, like), ilike(patients.lastName, like), ilike(patients.email, like))!;
      }),
    )!;
    conditions.push(nameMatch);
    if (digits.length >= 4) conditions.push(sql`regexp_replace(coalesce(${patients.phone}, ''), '[^0-9]', '', 'g') like ${`%${digits}%`}`);
  }
  const rows = await db
    .select({ id: patients.id, firstName: patients.firstName, lastName: patients.lastName, dateOfBirth: patients.dateOfBirth, email: patients.email, phone: patients.phone, remindersByEmail: patients.remindersByEmail })
    .from(patients)
    .where(or(...conditions))
    .orderBy(asc(patients.lastName), asc(patients.firstName))
    .limit(8);
  return Response.json({ q, results: rows.map((r) => ({ ...r, name: `${r.firstName} ${r.lastName}` })) });
}

export const newPatientSchema = z.object({
  firstName: z.string({ error: "Give the first name." }).trim().min(1, "Give the first name.").max(80),
  lastName: z.string({ error: "Give the last name." }).trim().min(1, "Give the last name.").max(80),
  dateOfBirth: z.iso.date({ error: "Give the date of birth (YYYY-MM-DD)." }).refine((d) => d <= new Date().toISOString().slice(0, 10) && d >= "1900-01-01", "The date of birth must be in the past."),
  email: z.union([z.literal(""), z.email({ error: "Enter a valid e-mail address." })]).optional(),
  phone: z.string().trim().max(40).optional(),
});

/** POST /api/schedule-patients — registers a new patient from the booking dialog. */
export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, STAFF_ROLES);
  const parsed = newPatientSchema.safeParse(await readBody(request));
  if (!parsed.success) return errorJson(400, "Check the patient's details.", zodFieldErrors(parsed.error));
  const v = parsed.data;
  const patient = await db.transaction(async (tx) => {
    const [row] = await tx
      .insert(patients)
      .values({ firstName: v.firstName, lastName: v.lastName, dateOfBirth: v.dateOfBirth, email: v.email || null, phone: v.phone || null })
      .returning({ id: patients.id, firstName: patients.firstName, lastName: patients.lastName, dateOfBirth: patients.dateOfBirth, email: patients.email });
    await audit({ action: "patient.registered", actorUserId: user.id, entityType: "patient", entityId: row!.id, patientId: row!.id, detail: { from: "booking" }, request }, tx);
    return row!;
  });
  return Response.json({ patient: { ...patient, name: `${patient.firstName} ${patient.lastName}` } }, { status: 201 });
}
