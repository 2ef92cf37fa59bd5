import { asc, eq } from "drizzle-orm";
import { appointmentTypes, practiceSettings } from "~/db/schema";
import { db } from "~/utils/db.server";
import { changePracticeSettings, saveAudited, type Actor } from "./audited.server";
import { activeFees } from "./fees.server";

export type AppointmentTypeValues = Omit<typeof appointmentTypes.$inferInsert, "id">;

/** The appointment types, the fees they may default to, and the reminder lead time. */
export async function appointmentTypesPage(editId: string | null) {
  const [types, fees, [settings]] = await Promise.all([
    db.select().from(appointmentTypes).orderBy(asc(appointmentTypes.name)),
    activeFees(),
    db
      .select({ reminderHoursBefore: practiceSettings.reminderHoursBefore, currency: practiceSettings.currency })
      .from(practiceSettings)
      .where(eq(practiceSettings.id, 1)),
  ]);
  return {
    types,
    fees,
    editing: types.find((t) => t.id === editId) ?? null,
    reminderHoursBefore: settings?.reminderHoursBefore ?? 24,
    currency: settings?.currency ?? "GBP",
  };
}

export async function setReminderHours(hours: number, actor: Actor) {
  await changePracticeSettings({ reminderHoursBefore: hours }, "practice.reminder_time_changed", { hours }, actor);
}

/** Adds an appointment type, or changes the type `id`; false when that type no longer exists. */
export async function saveAppointmentType(id: string | undefined, values: AppointmentTypeValues, actor: Actor) {
  return saveAudited(
    {
      id,
      entityType: "appointment_type",
      actions: { created: "appointment_type.created", changed: "appointment_type.changed" },
      detail: values,
    },
    actor,
    async (tx) =>
      id
        ? (
            await tx
              .update(appointmentTypes)
              .set(values)
              .where(eq(appointmentTypes.id, id))
              .returning({ id: appointmentTypes.id })
          )[0]
        : (await tx.insert(appointmentTypes).values(values).returning({ id: appointmentTypes.id }))[0],
  );
}
