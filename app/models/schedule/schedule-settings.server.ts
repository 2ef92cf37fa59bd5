import { eq } from "drizzle-orm";
import { practiceSettings } from "~/db/schema";
import { db } from "~/utils/db.server";

/** The practice settings the schedule, reminders and recalls work with. */
export async function practiceSchedule() {
  const [p] = await db
    .select({
      timeZone: practiceSettings.timeZone,
      reminderHoursBefore: practiceSettings.reminderHoursBefore,
      recallMonthsChild: practiceSettings.recallMonthsChild,
      recallMonthsAdult: practiceSettings.recallMonthsAdult,
      childUnderYears: practiceSettings.childUnderYears,
      name: practiceSettings.name,
      phone: practiceSettings.phone,
      email: practiceSettings.email,
      addressLine1: practiceSettings.addressLine1,
      city: practiceSettings.city,
      portalBookingDays: practiceSettings.portalBookingDays,
      staffBookingDays: practiceSettings.staffBookingDays,
    })
    .from(practiceSettings)
    .where(eq(practiceSettings.id, 1));
  return (
    p ?? {
      timeZone: "Europe/London",
      reminderHoursBefore: 24,
      recallMonthsChild: 12,
      recallMonthsAdult: 24,
      childUnderYears: 16,
      name: "The practice",
      phone: "",
      email: "",
      addressLine1: "",
      city: "",
      portalBookingDays: 90,
      staffBookingDays: 730,
    }
  );
}
