import { asc, desc, eq } from "drizzle-orm";
import { practiceSettings, referralRecipients } from "~/db/schema";
import { DEFAULT_TIME_FRAMES } from "~/lib/referrals";
import { db } from "~/utils/db.server";
import { notFound } from "~/utils/failure.server";
import { auditedWrite, changePracticeSettings, saveAudited, type Actor } from "./audited.server";

export type RecipientValues = Omit<
  typeof referralRecipients.$inferInsert,
  "id" | "email" | "active" | "createdAt" | "updatedAt"
> & { email: string };
export type ReferralTimeFrames = Pick<
  typeof practiceSettings.$inferInsert,
  "referralDaysSameDay" | "referralDaysUrgent" | "referralDaysSoon" | "referralDaysRoutine"
>;

/** The referral directory (in use first, by name), the recipient `editId` and the reply time frames. */
export async function recipientsPage(editId: string | null) {
  const rows = await db
    .select()
    .from(referralRecipients)
    .orderBy(desc(referralRecipients.active), asc(referralRecipients.name));
  const [p] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
  const editing = rows.find((r) => r.id === editId) ?? null;
  return {
    recipients: rows.map((r) => ({
      id: r.id,
      name: r.name,
      clinic: r.clinic,
      specialty: r.specialty,
      email: r.email,
      phone: r.phone,
      city: r.city,
      preferredDelivery: r.preferredDelivery,
      active: r.active,
    })),
    editing: editing
      ? {
          id: editing.id,
          name: editing.name,
          clinic: editing.clinic,
          specialty: editing.specialty,
          email: editing.email ?? "",
          phone: editing.phone,
          addressLine1: editing.addressLine1,
          addressLine2: editing.addressLine2,
          city: editing.city,
          postcode: editing.postcode,
          preferredDelivery: editing.preferredDelivery,
          notes: editing.notes,
        }
      : null,
    timeFrames: {
      referralDaysSameDay: String(p?.referralDaysSameDay ?? DEFAULT_TIME_FRAMES.same_day),
      referralDaysUrgent: String(p?.referralDaysUrgent ?? DEFAULT_TIME_FRAMES.urgent),
      referralDaysSoon: String(p?.referralDaysSoon ?? DEFAULT_TIME_FRAMES.soon),
      referralDaysRoutine: String(p?.referralDaysRoutine ?? DEFAULT_TIME_FRAMES.routine),
    },
  };
}

/** How many days a reply is due in, by urgency. */
export async function setReferralTimeFrames(values: ReferralTimeFrames, actor: Actor) {
  await changePracticeSettings(values, "practice.referral_time_frames_changed", values, actor);
}

/** Adds a recipient, or changes the recipient `id`; false when that recipient no longer exists. */
export async function saveRecipient(id: string | undefined, values: RecipientValues, actor: Actor) {
  const row = { ...values, email: values.email || null, updatedAt: new Date() };
  return saveAudited(
    {
      id,
      entityType: "referral_recipient",
      actions: { created: "referral_recipient.created", changed: "referral_recipient.updated" },
    },
    actor,
    async (tx) =>
      id
        ? (
            await tx
              .update(referralRecipients)
              .set(row)
              .where(eq(referralRecipients.id, id))
              .returning({ id: referralRecipients.id })
          )[0]
        : (await tx.insert(referralRecipients).values(row).returning({ id: referralRecipients.id }))[0],
  );
}

/** Hides a recipient from new referrals, or offers them again; answers their name, 404 when they no longer exist. */
export async function setRecipientInUse(id: string, active: boolean, actor: Actor) {
  const row = await auditedWrite(
    {
      action: active ? "referral_recipient.reactivated" : "referral_recipient.deactivated",
      entityType: "referral_recipient",
      entityId: id,
    },
    actor,
    async (tx) =>
      (
        await tx
          .update(referralRecipients)
          .set({ active, updatedAt: new Date() })
          .where(eq(referralRecipients.id, id))
          .returning({ id: referralRecipients.id, name: referralRecipients.name })
      )[0],
  );
  if (!row) notFound("Not found.");
  return row;
}
