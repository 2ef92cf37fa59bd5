import { and, asc, eq, inArray } from "drizzle-orm";
import { appointmentTypes, patients, providerBreaks, workingHours } from "~/db/schema";
import { db } from "~/utils/db.server";
import { bookableProviders } from "~/models/schedule/schedule.server";
import { activeRooms, activeSites } from "~/models/schedule/sites.server";

/** Providers, active appointment types, everyone's working hours, the sites and their rooms, for the schedule pages. */
export async function scheduleReferenceData() {
  const providers = await bookableProviders();
  const types = await db
    .select({ id: appointmentTypes.id, name: appointmentTypes.name, durationMinutes: appointmentTypes.durationMinutes })
    .from(appointmentTypes)
    .where(eq(appointmentTypes.active, true))
    .orderBy(asc(appointmentTypes.name));
  const ids = providers.map((p) => p.id);
  const hours = ids.length ? await db.select().from(workingHours).where(inArray(workingHours.providerId, ids)) : [];
  const breaks = ids.length
    ? await db.select().from(providerBreaks).where(inArray(providerBreaks.providerId, ids))
    : [];
  const [sites, rooms] = await Promise.all([activeSites(), activeRooms()]);
  return { providers, types, hours, breaks, sites, rooms };
}

export async function patientOption(id: string | null) {
  if (!id) return null;
  const [p] = await db
    .select({
      id: patients.id,
      firstName: patients.firstName,
      lastName: patients.lastName,
      dateOfBirth: patients.dateOfBirth,
      email: patients.email,
    })
    .from(patients)
    .where(and(eq(patients.id, id)));
  return p ?? null;
}
