/** Fixtures shared by the schedule, reminder and recall integration tests. */
import { eq, sql } from "drizzle-orm";
import { appointments, appointmentTypes } from "~/db/schema";
import { db } from "~/utils/db.server";
import { newPatient as makePatient } from "#tests/support/factories";
import { cookieFor, DEMO_EMAIL, makeRequest, uniqueEmail, userByEmail } from "#tests/support/helpers";

export async function demoIds() {
  const optometrist = await userByEmail(DEMO_EMAIL.optometrist);
  const owner = await userByEmail(DEMO_EMAIL.owner);
  const receptionist = await userByEmail(DEMO_EMAIL.receptionist);
  const [exam] = await db.select().from(appointmentTypes).where(eq(appointmentTypes.name, "Comprehensive eye exam"));
  const [collection] = await db
    .select()
    .from(appointmentTypes)
    .where(eq(appointmentTypes.name, "Spectacle collection"));
  return { optometrist, owner, receptionist, examType: exam!, collectionType: collection! };
}

export async function newPatient(
  opts: {
    dateOfBirth?: string;
    remindersByEmail?: boolean;
    recallsByEmail?: boolean;
    email?: string | null;
    firstName?: string;
    lastName?: string;
  } = {},
) {
  const email = opts.email === undefined ? uniqueEmail("patient") : opts.email;
  return makePatient({
    ...(opts.firstName ? { firstName: opts.firstName } : {}),
    ...(opts.lastName ? { lastName: opts.lastName } : {}),
    dateOfBirth: opts.dateOfBirth ?? "1980-01-01",
    email,
    remindersByEmail: opts.remindersByEmail ?? true,
    recallsByEmail: opts.recallsByEmail ?? true,
  });
}

export async function postBooking(
  body: unknown,
  role: "receptionist" | "optometrist" | "owner" | "patient" = "receptionist",
  cookie?: string,
) {
  const { action } = await import("~/routes/api/appointments");
  const request = makeRequest("/api/appointments", {
    method: "POST",
    cookie: cookie ?? (await cookieFor(role)),
    json: body,
  });
  try {
    return (await action({ request, params: {}, context: {} } as never)) as Response;
  } catch (thrown) {
    if (thrown instanceof Response) return thrown;
    // A guard's data() refusal: turn it into the Response React Router would send.
    const t = thrown as { data?: unknown; init?: { status?: number } };
    return Response.json(t.data ?? null, { status: t.init?.status ?? 500 });
  }
}

/** A completed visit in the past, written directly (booking refuses the past). */
export async function pastVisit(patientId: string, providerId: string, typeId: string, startsAt: Date, minutes = 30) {
  const [a] = await db
    .insert(appointments)
    .values({
      patientId,
      providerId,
      appointmentTypeId: typeId,
      startsAt,
      endsAt: new Date(startsAt.getTime() + minutes * 60_000),
      status: "completed",
    })
    .returning();
  return a!;
}

export async function jobsFor(name: string, dataKey: string, value: string) {
  const result = await db.execute<{ id: string; state: string; start_after: Date; retry_delay: number }>(
    sql`select id, state, start_after, retry_delay from pgboss.job where name = ${name} and data->>${dataKey} = ${value}`,
  );
  return result.rows;
}
