import { eq } from "drizzle-orm";
import { patients } from "~/db/schema";
import { audit } from "~/utils/audit.server";
import { db } from "~/utils/db.server";
import type { UnsubscribeList } from "~/utils/mail.server";

/** The patient's own e-mail choices (appointment e-mails, recalls) and the address they go to. */
export async function emailChoicesOf(patientId: string) {
  const [row] = await db
    .select({
      remindersByEmail: patients.remindersByEmail,
      recallsByEmail: patients.recallsByEmail,
      email: patients.email,
    })
    .from(patients)
    .where(eq(patients.id, patientId));
  return row;
}

/** Saves the choices the patient made in the portal, with its audit row, in one transaction. */
export async function saveEmailChoices(input: {
  actorUserId: string;
  patientId: string;
  choice: { remindersByEmail: boolean; recallsByEmail: boolean };
  request?: Request;
}) {
  const { actorUserId, patientId, choice, request } = input;
  await db.transaction(async (tx) => {
    await tx
      .update(patients)
      .set({ ...choice, updatedAt: new Date() })
      .where(eq(patients.id, patientId));
    await audit(
      {
        action: "portal.reminder_choice",
        actorUserId,
        patientId,
        entityType: "patient",
        entityId: patientId,
        detail: choice,
        request,
      },
      tx,
    );
  });
}

/** Whether the patient still gets each kind of e-mail an unsubscribe link can stop; undefined if there is no such patient. */
export async function unsubscribeState(patientId: string) {
  const [p] = await db
    .select({ reminders: patients.remindersByEmail, recalls: patients.recallsByEmail })
    .from(patients)
    .where(eq(patients.id, patientId));
  return p;
}

/**
 * Turns one kind of e-mail off from an unsubscribe link (no sign-in), with its audit row in the
 * same transaction. A patient who no longer exists changes nothing.
 */
export async function unsubscribeByLink(patientId: string, list: UnsubscribeList, request?: Request) {
  await db.transaction(async (tx) => {
    const [p] = await tx
      .update(patients)
      .set(
        list === "reminders"
          ? { remindersByEmail: false, updatedAt: new Date() }
          : { recallsByEmail: false, updatedAt: new Date() },
      )
      .where(eq(patients.id, patientId))
      .returning({ id: patients.id });
    if (p)
      await audit(
        {
          action: "patient.email_opt_out",
          entityType: "patient",
          entityId: p.id,
          patientId: p.id,
          detail: { list, via: "unsubscribe link" },
          request,
        },
        tx,
      );
  });
}
