import 'server-only';
import { aliasedTable, and, asc, desc, eq, gt, inArray, isNull, sql } from 'drizzle-orm';
import { db, type Tx } from '@/db/client';
import { clinics, staffSessions, staffTokens, staffUsers } from '@/db/schema';
import { recordAudit } from '@/lib/audit';
import { requirePermission, type Actor } from '@/lib/auth/guards';
import { hashPassword } from '@/lib/auth/password';
import { hashBridgeToken } from '@/lib/auth/tokens';
import { ApiError, notFound } from '@/lib/http';
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

/** A new invitation link for someone invited (first or again): stored hashed, e-mailed, returns its expiry. */
async function mailInvitation(tx: Tx, actor: Actor, user: { id: string; email: string; displayName: string }, now: Date) {
  const { token, hash } = newLinkToken();
  const expiresAt = new Date(now.getTime() + INVITE_HOURS * 3_600_000);
  await tx.insert(staffTokens).values({ clinicId: actor.clinicId, userId: user.id, purpose: 'invite', tokenHash: hash, expiresAt, createdBy: actor.userId });
  const [clinic] = await tx.select({ name: clinics.name }).from(clinics).where(eq(clinics.id, actor.clinicId));
  await enqueueMail(tx, { clinicId: actor.clinicId, purpose: 'invitation', to: [user.email], ...linkMail('invite', clinic.name, user.displayName, link(token), expiresAt.toISOString()), createdBy: actor.userId });
  return expiresAt;
}

/**
 * Someone invited who has not accepted yet: inactive, with an invitation link and none of them used
 * (accepting uses every open link of the person). They are listed under invitations, not as staff.
 */
export const invitationPending = sql`(${staffUsers.active} = false
  and exists (select 1 from ${staffTokens} where ${staffTokens.userId} = ${staffUsers.id} and ${staffTokens.purpose} = 'invite')
  and not exists (select 1 from ${staffTokens} where ${staffTokens.userId} = ${staffUsers.id} and ${staffTokens.purpose} = 'invite' and ${staffTokens.usedAt} is not null))`;

/** Creates an inactive staff member and e-mails them an invitation link. */
export async function inviteStaff(actor: Actor, input: InviteStaffInput, now = new Date()) {
  requirePermission(actor, 'manageClinic');
  const database = await db();
  // Unusable until the invitation is accepted: a hash of random bytes nobody knows.
  const placeholder = await hashPassword(randomBytes(32).toString('base64url'));
  return database.transaction(async (tx) => {
    const [existing] = await tx.select({ id: staffUsers.id, pending: sql<boolean>`${invitationPending}` }).from(staffUsers).where(sql`lower(${staffUsers.email}) = ${input.email}`);
    if (existing?.pending) throw new ApiError(409, 'already_invited', 'This address already has an invitation waiting: send it again from Pending invitations.', [{ path: 'email', message: 'Already invited.' }]);
    if (existing) throw new ApiError(409, 'email_taken', 'Someone with this e-mail address already has an account.', [{ path: 'email', message: 'Already in use.' }]);
    const [user] = await tx
      .insert(staffUsers)
      .values({ clinicId: actor.clinicId, email: input.email, displayName: input.displayName, role: input.role, passwordHash: placeholder, active: false })
      .returning();
    const expiresAt = await mailInvitation(tx, actor, user, now);
    await recordAudit(tx, { clinicId: actor.clinicId, actorUserId: actor.userId, action: 'staff.invited', entityType: 'staff_user', entityId: user.id, details: { email: input.email, role: input.role, expiresAt: expiresAt.toISOString() } });
    return { id: user.id, email: user.email, expiresAt };
  });
}

export type InvitationState = 'waiting' | 'expired' | 'revoked';

/** Invitations not accepted yet, newest first: who, role, who invited them (the latest link), until when. */
export async function listInvitations(actor: Actor, now = new Date()) {
  requirePermission(actor, 'manageClinic');
  const database = await db();
  const people = await database
    .select({ id: staffUsers.id, displayName: staffUsers.displayName, email: staffUsers.email, role: staffUsers.role })
    .from(staffUsers)
    .where(and(eq(staffUsers.clinicId, actor.clinicId), invitationPending))
    .orderBy(asc(staffUsers.displayName));
  if (!people.length) return [];
  const inviter = aliasedTable(staffUsers, 'inviter');
  const links = await database
    .select({ userId: staffTokens.userId, createdAt: staffTokens.createdAt, expiresAt: staffTokens.expiresAt, revokedAt: staffTokens.revokedAt, invitedBy: inviter.displayName })
    .from(staffTokens)
    .leftJoin(inviter, eq(inviter.id, staffTokens.createdBy))
    .where(and(inArray(staffTokens.userId, people.map((p) => p.id)), eq(staffTokens.purpose, 'invite')))
    .orderBy(desc(staffTokens.createdAt), desc(staffTokens.id));
  const latest = new Map<string, (typeof links)[number]>();
  for (const l of links) if (!latest.has(l.userId)) latest.set(l.userId, l);
  return people
    .map((p) => {
      const l = latest.get(p.id)!;
      const state: InvitationState = l.revokedAt ? 'revoked' : l.expiresAt <= now ? 'expired' : 'waiting';
      return { ...p, invitedAt: l.createdAt, invitedBy: l.invitedBy, expiresAt: l.expiresAt, revokedAt: l.revokedAt, state };
    })
    .sort((a, b) => b.invitedAt.getTime() - a.invitedAt.getTime());
}

/** The invited person, locked, or 404/409 when there is no invitation waiting for an answer. */
async function pendingInvitee(tx: Tx, actor: Actor, userId: string) {
  const [user] = await tx
    .select({ id: staffUsers.id, email: staffUsers.email, displayName: staffUsers.displayName, role: staffUsers.role, pending: sql<boolean>`${invitationPending}` })
    .from(staffUsers)
    .where(and(eq(staffUsers.id, userId), eq(staffUsers.clinicId, actor.clinicId)))
    .for('update');
  if (!user) throw notFound('The invitation');
  if (!user.pending) throw new ApiError(409, 'not_invited', `${user.displayName} has no invitation waiting: they already accepted it, or were added directly.`);
  return user;
}

/** Withdraws every open invitation link of the person; returns how many. */
async function revokeOpenLinks(tx: Tx, userId: string, now: Date) {
  const revoked = await tx
    .update(staffTokens)
    .set({ revokedAt: now })
    .where(and(eq(staffTokens.userId, userId), eq(staffTokens.purpose, 'invite'), isNull(staffTokens.usedAt), isNull(staffTokens.revokedAt)))
    .returning({ id: staffTokens.id });
  return revoked.length;
}

/** Sends a fresh link (for another 72 hours); the links sent before stop working. */
export async function resendInvitation(actor: Actor, userId: string, now = new Date()) {
  requirePermission(actor, 'manageClinic');
  const database = await db();
  return database.transaction(async (tx) => {
    const user = await pendingInvitee(tx, actor, userId);
    const revokedLinks = await revokeOpenLinks(tx, user.id, now);
    const expiresAt = await mailInvitation(tx, actor, user, now);
    await recordAudit(tx, { clinicId: actor.clinicId, actorUserId: actor.userId, action: 'staff.invitation-resent', entityType: 'staff_user', entityId: user.id, details: { email: user.email, role: user.role, expiresAt: expiresAt.toISOString(), revokedLinks } });
    return { id: user.id, email: user.email, expiresAt };
  });
}

/** Withdraws the invitation: its link stops working; it stays listed as revoked and can be sent again. */
export async function revokeInvitation(actor: Actor, userId: string, now = new Date()) {
  requirePermission(actor, 'manageClinic');
  const database = await db();
  return database.transaction(async (tx) => {
    const user = await pendingInvitee(tx, actor, userId);
    const revokedLinks = await revokeOpenLinks(tx, user.id, now);
    if (revokedLinks === 0) throw new ApiError(409, 'already_revoked', `${user.displayName}’s invitation is already revoked.`);
    await recordAudit(tx, { clinicId: actor.clinicId, actorUserId: actor.userId, action: 'staff.invitation-revoked', entityType: 'staff_user', entityId: user.id, details: { email: user.email, revokedLinks } });
    return { id: user.id, revokedAt: now };
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
 * account. An unknown, used, revoked or expired token gets the same answer.
 */
export async function setPasswordWithToken(token: string, password: string, now = new Date()) {
  const database = await db();
  const passwordHash = await hashPassword(password);
  return database.transaction(async (tx) => {
    const [row] = await tx
      .select()
      .from(staffTokens)
      .where(and(eq(staffTokens.tokenHash, hashBridgeToken(token)), isNull(staffTokens.usedAt), isNull(staffTokens.revokedAt), gt(staffTokens.expiresAt, now)))
      .for('update');
    if (!row) throw new ApiError(410, 'link_invalid', 'This link has expired, was already used, or was withdrawn. Ask for a new one.');
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
