import { eq, sql } from "drizzle-orm";
import { patients, practiceSettings, users } from "~/db/schema";
import { audit } from "~/utils/audit.server";
import { db } from "~/utils/db.server";
import { absoluteUrl, sendMail } from "~/utils/mail.server";
import type { SessionUser } from "~/utils/session.server";
import { issueUserToken } from "~/utils/tokens.server";
import { DomainError, notFound, type DomainErrorOptions } from "~/utils/failure.server";

/** A refused invitation (no address, an account already active or the address taken); answered 409. */
export class PortalInviteError extends DomainError {
  constructor(message: string, options: DomainErrorOptions = {}) {
    super(message, { status: 409, ...options });
  }
}

/**
 * Invites a patient to their online page: creates (or reuses) the patient's account, linked to
 * the one patient record it may reach, and e-mails a single-use link to set a password.
 */
export async function invitePatientToPortal(actor: SessionUser, patientId: string, request: Request) {
  const [patient] = await db
    .select({ id: patients.id, firstName: patients.firstName, lastName: patients.lastName, email: patients.email })
    .from(patients)
    .where(eq(patients.id, patientId));
  if (!patient) notFound("No such patient.");
  const email = patient.email?.trim().toLowerCase();
  if (!email) throw new PortalInviteError("Add the patient's e-mail address first: the invitation goes there.");

  const token = await db.transaction(async (tx) => {
    const [linked] = await tx
      .select({ id: users.id, hasPassword: users.passwordHash, active: users.active })
      .from(users)
      .where(eq(users.patientId, patient.id));
    let userId = linked?.id;
    if (linked?.hasPassword && linked.active)
      throw new PortalInviteError(
        "This patient already has an active online account. They can reset their password from the sign-in page.",
      );
    if (!userId) {
      const [clash] = await tx
        .select({ id: users.id })
        .from(users)
        .where(sql`lower(${users.email}) = ${email}`);
      if (clash) throw new PortalInviteError(`The address ${email} already belongs to another account.`);
      const [created] = await tx
        .insert(users)
        .values({ email, name: `${patient.firstName} ${patient.lastName}`, role: "patient", patientId: patient.id })
        .returning({ id: users.id });
      userId = created!.id;
    } else if (!linked?.active) {
      await tx.update(users).set({ active: true, updatedAt: new Date() }).where(eq(users.id, userId));
    }
    await audit(
      {
        action: "portal.invited",
        actorUserId: actor.id,
        patientId: patient.id,
        entityType: "user",
        entityId: userId,
        request,
      },
      tx,
    );
    return issueUserToken(userId, "invite", tx);
  });

  const [practice] = await db.select({ name: practiceSettings.name }).from(practiceSettings).limit(1);
  await sendMail({
    to: email,
    subject: `Your online page at ${practice?.name ?? "the practice"}`,
    text:
      `Hello ${patient.firstName},\n\n${practice?.name ?? "The practice"} has set up an online page for you: your appointments, invoices, prescriptions and reminder choices.\n\n` +
      `Open this link within 7 days to choose your password:\n\n${absoluteUrl(`/reset-password?token=${token}`)}\n\nThe link works once.\n`,
  });
  return { email };
}
