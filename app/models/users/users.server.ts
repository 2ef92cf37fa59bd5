import { and, asc, count, eq, ne, sql } from "drizzle-orm";
import { sessions, users, type Role } from "~/db/schema";
import { audit } from "~/utils/audit.server";
import { db } from "~/utils/db.server";
import { absoluteUrl, sendMail } from "~/utils/mail.server";
import type { SessionUser } from "~/utils/session.server";
import { issueUserToken } from "~/utils/tokens.server";
import { DomainError, type DomainErrorOptions, notFound } from "~/utils/failure.server";

/** A refused change to an account; answered 409. */
export class UserAdminError extends DomainError {
  constructor(message: string, options: DomainErrorOptions = {}) {
    super(message, { status: 409, ...options });
  }
}

/** Every account, by role and name; `pending` while an invited person has not set a password. */
export async function staffAccounts() {
  const rows = await db
    .select({
      id: users.id,
      name: users.name,
      email: users.email,
      role: users.role,
      active: users.active,
      invited: users.passwordHash,
    })
    .from(users)
    .orderBy(asc(users.role), asc(users.name));
  return rows.map(({ invited, ...u }) => ({ ...u, pending: invited === null }));
}

/** Creates an account without a password and e-mails a single-use link to set one. */
export async function inviteUser(
  actor: SessionUser,
  input: { email: string; name: string; role: Role; licenceNumber?: string },
  request: Request,
) {
  const { token, user } = await db.transaction(async (tx) => {
    const [existing] = await tx
      .select({ id: users.id })
      .from(users)
      .where(sql`lower(${users.email}) = ${input.email}`)
      .limit(1);
    if (existing) throw new UserAdminError(`An account for ${input.email} already exists.`);
    const [user] = await tx
      .insert(users)
      .values({ email: input.email, name: input.name, role: input.role, licenceNumber: input.licenceNumber || null })
      .returning({ id: users.id, email: users.email, name: users.name });
    const token = await issueUserToken(user!.id, "invite", tx);
    await audit(
      {
        action: "user.invited",
        actorUserId: actor.id,
        entityType: "user",
        entityId: user!.id,
        detail: { email: input.email, role: input.role },
        request,
      },
      tx,
    );
    return { token, user: user! };
  });
  const link = absoluteUrl(`/reset-password?token=${token}`);
  await sendMail({
    to: user.email,
    subject: "You have been invited to Dioptra",
    text: `Hello ${user.name},\n\n${actor.name} has invited you to the practice's Dioptra account. Open this link within 7 days to set your password:\n\n${link}\n\nThe link works once.\n`,
  });
  return user;
}

async function assertNotLastOwner(userId: string) {
  const [row] = await db
    .select({ n: count() })
    .from(users)
    .where(and(eq(users.role, "owner"), eq(users.active, true), ne(users.id, userId)));
  if ((row?.n ?? 0) === 0)
    throw new UserAdminError("The practice needs at least one active owner. Make someone else an owner first.");
}

async function loadTarget(userId: string) {
  const [target] = await db
    .select({ id: users.id, role: users.role, active: users.active, email: users.email })
    .from(users)
    .where(eq(users.id, userId))
    .limit(1);
  if (!target) notFound("No such account.");
  return target;
}

export async function changeRole(actor: SessionUser, userId: string, role: Role, request: Request) {
  const target = await loadTarget(userId);
  if (target.role === role) return;
  if (target.role === "patient" || role === "patient")
    throw new UserAdminError("Patient accounts are linked to a patient record; their role cannot be changed here.");
  if (target.role === "owner") await assertNotLastOwner(userId);
  await db.transaction(async (tx) => {
    await tx.update(users).set({ role, updatedAt: new Date() }).where(eq(users.id, userId));
    // A role change takes effect at once: the account signs in again with its new rights.
    await tx.delete(sessions).where(eq(sessions.userId, userId));
    await audit(
      {
        action: "user.role_changed",
        actorUserId: actor.id,
        entityType: "user",
        entityId: userId,
        detail: { from: target.role, to: role, email: target.email },
        request,
      },
      tx,
    );
  });
}

export async function setActive(actor: SessionUser, userId: string, active: boolean, request: Request) {
  const target = await loadTarget(userId);
  if (target.active === active) return;
  if (!active && userId === actor.id) throw new UserAdminError("You cannot deactivate your own account.");
  if (!active && target.role === "owner") await assertNotLastOwner(userId);
  await db.transaction(async (tx) => {
    await tx.update(users).set({ active, updatedAt: new Date() }).where(eq(users.id, userId));
    if (!active) await tx.delete(sessions).where(eq(sessions.userId, userId));
    await audit(
      {
        action: active ? "user.reactivated" : "user.deactivated",
        actorUserId: actor.id,
        entityType: "user",
        entityId: userId,
        detail: { email: target.email },
        request,
      },
      tx,
    );
  });
}
