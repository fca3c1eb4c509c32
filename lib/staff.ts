import 'server-only';
import { and, asc, eq, isNull, not, sql } from 'drizzle-orm';
import { db } from '@/db/client';
import { clinics, staffSessions, staffUsers, type StaffUser } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { decoyHash, hashPassword, verifyPassword } from '@/lib/auth/password';
import { withHashSlot } from '@/lib/auth/throttle';
import { recordAudit } from '@/lib/audit';
import { invitationPending } from '@/lib/auth/staff-links';
import { ApiError, notFound } from '@/lib/http';
import { publishSessionEnded } from '@/lib/live/bus';
import type { NewStaffInput, SetupInput } from '@/lib/validation/api';

const isUniqueViolation = (error: unknown) =>
  typeof error === 'object' && error !== null && ((error as { code?: string }).code === '23505' ||
    (error as { cause?: { code?: string } }).cause?.code === '23505');

export type SignInRefusal = 'wrong_credentials' | 'deactivated';

/**
 * Checks e-mail and password; the same answer and similar time whether the address exists or not.
 * Only someone who knows the password learns that the account is deactivated (so they can ask an administrator).
 */
export async function authenticate(
  email: string,
  password: string,
  context: { address?: string } = {},
): Promise<{ user: StaffUser } | { refused: SignInRefusal }> {
  const database = await db();
  const [user] = await database
    .select()
    .from(staffUsers)
    .where(sql`lower(${staffUsers.email}) = ${email.toLowerCase()}`);
  const ok = await withHashSlot(async () => verifyPassword(password, user?.passwordHash ?? (await decoyHash())));
  if (!user || !ok || !user.active) {
    if (user) {
      // Failed sign-ins to a known account are in its clinic's audit trail (never the password tried).
      await recordAudit(database, {
        clinicId: user.clinicId,
        action: 'staff.sign_in_failed',
        entityType: 'staff_user',
        entityId: user.id,
        details: { reason: !ok ? 'wrong_password' : 'inactive', ...(context.address ? { address: context.address } : {}) },
      });
    }
    return { refused: user && ok ? 'deactivated' : 'wrong_credentials' };
  }
  await database.transaction(async (tx) => {
    await tx.update(staffUsers).set({ lastSignInAt: new Date() }).where(eq(staffUsers.id, user.id));
    await recordAudit(tx, {
      clinicId: user.clinicId,
      actorUserId: user.id,
      action: 'staff.signed_in',
      entityType: 'staff_user',
      entityId: user.id,
    });
  });
  return { user };
}

export async function clinicCount(): Promise<number> {
  const database = await db();
  const [row] = await database.select({ n: sql<number>`count(*)::int` }).from(clinics);
  return row.n;
}

/** First run on an empty database: the clinic and its first administrator. Refused once any clinic exists. */
export async function createFirstClinic(input: SetupInput) {
  const database = await db();
  const passwordHash = await hashPassword(input.password);
  return database.transaction(async (tx) => {
    // Serialise concurrent first-run attempts; only the first one finds the table empty.
    await tx.execute(sql`lock table clinics in exclusive mode`);
    const [{ n }] = await tx.select({ n: sql<number>`count(*)::int` }).from(clinics);
    if (n > 0) throw new ApiError(409, 'already_set_up', 'This Benchwire is already set up. Sign in instead.');
    const [clinic] = await tx.insert(clinics).values({ name: input.clinicName, timeZone: input.timeZone }).returning();
    const [admin] = await tx
      .insert(staffUsers)
      .values({ clinicId: clinic.id, email: input.email, displayName: input.displayName, role: 'admin', passwordHash })
      .returning();
    await recordAudit(tx, {
      clinicId: clinic.id,
      actorUserId: admin.id,
      action: 'clinic.created',
      entityType: 'clinic',
      entityId: clinic.id,
      details: { name: clinic.name },
    });
    return { clinic, admin };
  });
}

const staffColumns = {
  id: staffUsers.id,
  email: staffUsers.email,
  displayName: staffUsers.displayName,
  role: staffUsers.role,
  active: staffUsers.active,
  mustChangePassword: staffUsers.mustChangePassword,
  createdAt: staffUsers.createdAt,
  lastSignInAt: staffUsers.lastSignInAt,
};

export async function listStaff(actor: Actor) {
  const database = await db();
  return database
    .select(staffColumns)
    .from(staffUsers)
    // Someone invited who has not accepted yet is listed with the invitations, not as (deactivated) staff.
    .where(and(eq(staffUsers.clinicId, actor.clinicId), not(invitationPending)))
    .orderBy(asc(staffUsers.displayName));
}

export async function addStaff(actor: Actor, input: NewStaffInput) {
  const database = await db();
  const passwordHash = await hashPassword(input.password);
  try {
    return await database.transaction(async (tx) => {
      const [user] = await tx
        .insert(staffUsers)
        .values({ clinicId: actor.clinicId, email: input.email, displayName: input.displayName, role: input.role, passwordHash })
        .returning(staffColumns);
      await recordAudit(tx, {
        clinicId: actor.clinicId,
        actorUserId: actor.userId,
        action: 'staff.added',
        entityType: 'staff_user',
        entityId: user.id,
        details: { role: user.role, email: user.email },
      });
      return user;
    });
  } catch (error) {
    if (isUniqueViolation(error)) {
      throw new ApiError(409, 'email_taken', 'Someone already signs in with this e-mail address.', [
        { path: 'email', message: 'Already in use.' },
      ]);
    }
    throw error;
  }
}

export async function updateStaff(actor: Actor, userId: string, change: { role?: Actor['role']; active?: boolean }) {
  if (change.role === undefined && change.active === undefined) {
    throw new ApiError(400, 'invalid_request', 'Nothing to change: send a role, active, or both.');
  }
  if (userId === actor.userId && (change.active === false || (change.role && change.role !== 'admin'))) {
    throw new ApiError(409, 'self_lockout', 'You cannot remove your own administrator access.');
  }
  const database = await db();
  return database.transaction(async (tx) => {
    const [user] = await tx
      .update(staffUsers)
      .set(change)
      .where(and(eq(staffUsers.id, userId), eq(staffUsers.clinicId, actor.clinicId)))
      .returning(staffColumns);
    if (!user) throw notFound('The staff member');
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'staff.updated',
      entityType: 'staff_user',
      entityId: userId,
      details: change,
    });
    if (change.active === false) await publishSessionEnded(tx, { userId });
    return user;
  });
}

/**
 * An administrator sets a temporary password for someone who forgot theirs: the person's open sessions
 * end, and they must choose their own password at the next sign-in. The password itself is never audited.
 */
export async function setTemporaryPassword(actor: Actor, userId: string, password: string) {
  const passwordHash = await hashPassword(password);
  const database = await db();
  return database.transaction(async (tx) => {
    const [user] = await tx
      .update(staffUsers)
      .set({ passwordHash, mustChangePassword: userId !== actor.userId })
      .where(and(eq(staffUsers.id, userId), eq(staffUsers.clinicId, actor.clinicId)))
      .returning(staffColumns);
    if (!user) throw notFound('The staff member');
    const ended = await tx
      .update(staffSessions)
      .set({ endedAt: new Date() })
      .where(and(eq(staffSessions.userId, userId), isNull(staffSessions.endedAt)))
      .returning({ id: staffSessions.id });
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'staff.temporary_password_set',
      entityType: 'staff_user',
      entityId: userId,
      details: { sessionsEnded: ended.length },
    });
    return user;
  });
}

/** Whether the person must choose a new password before using Benchwire (after a temporary one). */
export async function mustChangePassword(userId: string): Promise<boolean> {
  const database = await db();
  const [row] = await database.select({ must: staffUsers.mustChangePassword }).from(staffUsers).where(eq(staffUsers.id, userId));
  return row?.must ?? false;
}

/** The signed-in person replaces their password, proving the current one; clears "must change". */
export async function changeOwnPassword(actor: Actor, input: { currentPassword: string; newPassword: string }) {
  const database = await db();
  const [user] = await database.select().from(staffUsers).where(eq(staffUsers.id, actor.userId));
  if (!user || !(await verifyPassword(input.currentPassword, user.passwordHash))) {
    throw new ApiError(400, 'invalid_request', 'The current password is not right.', [{ path: 'currentPassword', message: 'Not right.' }]);
  }
  const passwordHash = await hashPassword(input.newPassword);
  await database.transaction(async (tx) => {
    await tx.update(staffUsers).set({ passwordHash, mustChangePassword: false }).where(eq(staffUsers.id, actor.userId));
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'staff.password_changed',
      entityType: 'staff_user',
      entityId: actor.userId,
    });
  });
}

export { isUniqueViolation };
