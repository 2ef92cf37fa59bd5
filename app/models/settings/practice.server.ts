import { eq } from "drizzle-orm";
import { practiceSettings } from "~/db/schema";
import { db } from "~/utils/db.server";
import { changePracticeSettings, type Actor } from "./audited.server";

export type PracticeDetails = Omit<Partial<typeof practiceSettings.$inferInsert>, "id" | "updatedAt">;

/** The practice's details as the form shows them (numbers as text); null when the settings row is missing. */
export async function practiceDetailsPage() {
  const [settings] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
  if (!settings) return null;
  const { updatedAt: _u, id: _id, ...values } = settings;
  return {
    values: {
      ...values,
      spectacleRxValidityMonths: String(values.spectacleRxValidityMonths),
      contactLensRxValidityMonths: String(values.contactLensRxValidityMonths),
      portalCancelCutoffHours: String(values.portalCancelCutoffHours),
      portalBookingDays: String(values.portalBookingDays),
      staffBookingDays: String(values.staffBookingDays),
    },
  };
}

export async function savePracticeDetails(values: PracticeDetails, actor: Actor) {
  await changePracticeSettings(values, "practice.settings_changed", values, actor);
}
