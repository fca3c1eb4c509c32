import 'server-only';
import { and, eq, gt, isNull, sql } from 'drizzle-orm';
import { db } from '@/db/client';
import { clinics, staffSessions, staffTokens, staffUsers } from '@/db/schema';
import { recordAudit } from '@/lib/audit';
import { requirePermission, type Actor } from '@/lib/auth/guards';
import { hashPassword } from '@/lib/auth/password';
import { hashBridgeToken } from '@/lib/auth/tokens';
import { ApiError } from '@/lib/http';
import { escapeHtml } from '@/lib/mail/compose';
import { enqueueMail } from '@/lib/mail/queue';
import type { InviteStaffInput } from '@/lib/validation/api';
import { randomBytes } from 'node:crypto';

// Invitations and password resets by e-mail: a 256-bit random token, single use, expiring; only its
// sha256 is stored (the e-mail carries the token, and the queue drops the body once it is sent).

export const INVITE_HOURS = 72;
export const RESET_MINUTES = 60;

const newLinkToken = () => {
  const token = randomBytes(32).toString('base64url');
  return { token, hash: hashBridgeToken(token) };
};

function link(token: string) {
  const base = process.env.APP_URL?.trim().replace(/\/+$/, '') ?? '';
  return `${base}/set-password?token=${encodeURIComponent(token)}`;
}

function linkMail(kind: 'invite' | 'reset', clinicName: string, name: string, url: string, expires: string) {
  const intro =
    kind === 'invite'
      ? `You have been invited to ${clinicName}'s Benchwire. Choose your password here (the link works once, until ${expires}):`
      : `Someone asked to reset your Benchwire password at ${clinicName}. If it was you, choose a new one here (the link works once, until ${expires}); if not, ignore this message:`;
  return {
    subject: kind === 'invite' ? `Your Benchwire invitation (${clinicName})` : 'Reset your Benchwire password',
    text: `Hello ${name},\n\n${intro}\n${url}\n`,
    html: `<p>Hello ${escapeHtml(name)},</p><p>${escapeHtml(intro)}</p><p><a href="${escapeHtml(url)}">${escapeHtml(url)}</a></p>`,
  };
}

/** Creates an inactive staff member and e-mails them an invitation link. */
export async function inviteStaff(actor: Actor, input: InviteStaffInput, now = new Date()) {
  requirePermission(actor, 'manageClinic');
  const database = await db();
  // Unusable until the invitation is accepted: a hash of random bytes nobody knows.
  const placeholder = await hashPassword(randomBytes(32).toString('base64url'));
  return database.transaction(async (tx) => {
    const [existing] = await tx.select({ id: staffUsers.id }).from(staffUsers).where(sql`lower(${staffUsers.email}) = ${input.email}`);
    if (existing) throw new ApiError(409, 'email_taken', 'Someone with this e-mail address already has an account.');
    const [user] = await tx
      .insert(staffUsers)
      .values({ clinicId: actor.clinicId, email: input.email, displayName: input.displayName, role: input.role, passwordHash: placeholder, active: false })
      .returning();
    const { token, hash } = newLinkToken();
    const expiresAt = new Date(now.getTime() + INVITE_HOURS * 3_600_000);
    await tx.insert(staffTokens).values({ clinicId: actor.clinicId, userId: user.id, purpose: 'invite', tokenHash: hash, expiresAt, createdBy: actor.userId });
    const [clinic] = await tx.select({ name: clinics.name }).from(clinics).where(eq(clinics.id, actor.clinicId));
    await enqueueMail(tx, { clinicId: actor.clinicId, purpose: 'invitation', to: [input.email], ...linkMail('invite', clinic.name, input.displayName, link(token), expiresAt.toISOString()), createdBy: actor.userId });
    await recordAudit(tx, { clinicId: actor.clinicId, actorUserId: actor.userId, action: 'staff.invited', entityType: 'staff_user', entityId: user.id, details: { email: input.email, role: input.role, expiresAt: expiresAt.toISOString() } });
    return { id: user.id, email: user.email, expiresAt };
  });
}

/** Always answers the same way, whether the address exists or not (no account discovery). */
export async function requestPasswordReset(email: string, now = new Date()) {
  const database = await db();
  await database.transaction(async (tx) => {
    const [user] = await tx.select().from(staffUsers).where(sql`lower(${staffUsers.email}) = ${email.toLowerCase()}`);
    if (!user || !user.active) return;
    const { token, hash } = newLinkToken();
    const expiresAt = new Date(now.getTime() + RESET_MINUTES * 60_000);
    await tx.insert(staffTokens).values({ clinicId: user.clinicId, userId: user.id, purpose: 'reset', tokenHash: hash, expiresAt });
    const [clinic] = await tx.select({ name: clinics.name }).from(clinics).where(eq(clinics.id, user.clinicId));
    await enqueueMail(tx, { clinicId: user.clinicId, purpose: 'password-reset', to: [user.email], ...linkMail('reset', clinic.name, user.displayName, link(token), expiresAt.toISOString()) });
    await recordAudit(tx, { clinicId: user.clinicId, actorUserId: user.id, action: 'staff.password-reset-requested', entityType: 'staff_user', entityId: user.id, details: { expiresAt: expiresAt.toISOString() } });
  });
}

/**
 * Uses a link once: sets the password, activates an invited account, ends every open session of a reset
 * account. An unknown, used or expired token gets the same answer.
 */
export async function setPasswordWithToken(token: string, password: string, now = new Date()) {
  const database = await db();
  const passwordHash = await hashPassword(password);
  return database.transaction(async (tx) => {
    const [row] = await tx
      .select()
      .from(staffTokens)
      .where(and(eq(staffTokens.tokenHash, hashBridgeToken(token)), isNull(staffTokens.usedAt), gt(staffTokens.expiresAt, now)))
      .for('update');
    if (!row) throw new ApiError(410, 'link_invalid', 'This link has expired or was already used. Ask for a new one.');
    await tx.update(staffTokens).set({ usedAt: now }).where(eq(staffTokens.id, row.id));
    const [user] = await tx
      .update(staffUsers)
      .set({ passwordHash, ...(row.purpose === 'invite' ? { active: true } : {}) })
      .where(eq(staffUsers.id, row.userId))
      .returning();
    if (row.purpose === 'reset') {
      await tx.update(staffSessions).set({ endedAt: now }).where(and(eq(staffSessions.userId, row.userId), isNull(staffSessions.endedAt)));
    }
    // Any other open link of this person is void once one is used.
    await tx.update(staffTokens).set({ usedAt: now }).where(and(eq(staffTokens.userId, row.userId), isNull(staffTokens.usedAt)));
    await recordAudit(tx, {
      clinicId: row.clinicId,
      actorUserId: row.userId,
      action: row.purpose === 'invite' ? 'staff.invitation-accepted' : 'staff.password-reset',
      entityType: 'staff_user',
      entityId: row.userId,
    });
    return { email: user.email, purpose: row.purpose };
  });
}
