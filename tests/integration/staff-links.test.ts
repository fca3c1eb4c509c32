import fs from 'node:fs';
import { eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { body, staffByEmail } from './support';
import * as invite from '@/app/api/admin/staff/invite/route';
import * as invitations from '@/app/api/admin/staff/invitations/route';
import * as resend from '@/app/api/admin/staff/[userId]/invitation/resend/route';
import * as revoke from '@/app/api/admin/staff/[userId]/invitation/revoke/route';
import * as staffRoute from '@/app/api/admin/staff/route';
import * as resetRoute from '@/app/api/auth/password-reset/route';
import * as setPassword from '@/app/api/auth/set-password/route';
import type { Database } from '@/db/client';
import { auditEvents, outboundMail, staffTokens } from '@/db/schema';
import { hashBridgeToken } from '@/lib/auth/tokens';
import { INVITE_HOURS, inviteStaff, listInvitations, requestPasswordReset, setPasswordWithToken } from '@/lib/auth/staff-links';
import { deliverDueMail, transportFromEnv } from '@/lib/mail/queue';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';
import { mailSink, type Sink } from '../helpers/mail';

// Invitations and password resets: the link arrives through the real local SMTP sink; the token is
// single use, expires, and only its SHA-256 (FIPS 180-4) is stored. Clock passed in for expiry.

let database: Database;
let admin: string;
let sink: Sink;

beforeAll(async () => {
  ({ database } = await seededDatabase());
  admin = await signIn('admin@fernhollow.example');
  sink = await mailSink();
  await sink.start();
});
afterAll(async () => {
  await sink.stop();
  fs.rmSync(sink.dir, { recursive: true, force: true });
});

/** Delivers the queue and returns the token from the newest message's link. */
async function tokenFromMail(expected: number) {
  await deliverDueMail({ transport: transportFromEnv({ SMTP_URL: sink.url }) });
  const messages = await sink.waitForMessages(expected);
  const match = /set-password\?token=([A-Za-z0-9_-]+)/.exec(messages[expected - 1].text ?? '');
  expect(match).not.toBeNull();
  return { token: decodeURIComponent(match![1]), message: messages[expected - 1] };
}
const set = (token: string, password: string) => setPassword.POST(request('/api/auth/set-password', { body: { token, password } }), undefined);

describe('staff invitations', () => {
  it('an invited person gets a link by e-mail, sets a password once, and can then sign in', async () => {
    const response = await invite.POST(request('/api/admin/staff/invite', { cookie: admin, body: { displayName: 'Dr. Oriel Fenn', email: 'oriel@fernhollow.example', role: 'veterinarian' } }), undefined);
    expect(response.status).toBe(201);
    const user = await staffByEmail(database.db, 'oriel@fernhollow.example');
    expect(user.active).toBe(false);
    const { token, message } = await tokenFromMail(1);
    expect(message.subject).toBe('Your Benchwire invitation (Fernhollow Animal Clinic)');
    // Only the hash is stored, and the sent mail no longer carries the link.
    const [row] = await database.db.select().from(staffTokens).where(eq(staffTokens.userId, user.id));
    expect(row.tokenHash).toBe(hashBridgeToken(token));
    expect(row.tokenHash).not.toContain(token);
    expect(JSON.stringify(await database.db.select().from(outboundMail))).not.toContain(token);

    expect((await set(token, 'a-long-enough-password')).status).toBe(200);
    expect((await staffByEmail(database.db, 'oriel@fernhollow.example')).active).toBe(true);
    await signIn('oriel@fernhollow.example', 'a-long-enough-password');
    // Single use.
    expect((await set(token, 'another-long-password')).status).toBe(410);
  });

  it('a second invitation for the same address is 409; a technician cannot invite (403)', async () => {
    expect((await invite.POST(request('/api/admin/staff/invite', { cookie: admin, body: { displayName: 'Again', email: 'oriel@fernhollow.example', role: 'technician' } }), undefined)).status).toBe(409);
    const tech = await signIn('tech@fernhollow.example');
    expect((await invite.POST(request('/api/admin/staff/invite', { cookie: tech, body: { displayName: 'X Y', email: 'x@fernhollow.example', role: 'technician' } }), undefined)).status).toBe(403);
  });
});

describe('password resets', () => {
  it('answers the same for a known and an unknown address (202), mailing only the known one', async () => {
    const known = await resetRoute.POST(request('/api/auth/password-reset', { body: { email: 'tech@fernhollow.example' } }), undefined);
    const unknown = await resetRoute.POST(request('/api/auth/password-reset', { body: { email: 'nobody@fernhollow.example' } }), undefined);
    expect(known.status).toBe(202);
    expect(unknown.status).toBe(202);
    expect(await body(known)).toEqual(await body(unknown));
    const { token, message } = await tokenFromMail(2);
    expect(message.subject).toBe('Reset your Benchwire password');
    expect((await set(token, 'short')).status).toBe(400);
    expect((await set(token, 'tech-new-password-1')).status).toBe(200);
    await signIn('tech@fernhollow.example', 'tech-new-password-1');
    expect((await set(token, 'tech-new-password-2')).status).toBe(410);
  });

  it('a reset link expires after 60 minutes (clock passed in)', async () => {
    const t0 = new Date();
    await requestPasswordReset('vet@fernhollow.example', t0);
    const { token } = await tokenFromMail(3);
    await expect(setPasswordWithToken(token, 'vet-new-password-1', new Date(t0.getTime() + 60 * 60_000))).rejects.toMatchObject({ status: 410 });
    const ok = await setPasswordWithToken(token, 'vet-new-password-1', new Date(t0.getTime() + 59 * 60_000));
    expect(ok.purpose).toBe('reset');
  });
});

describe('pending invitations', () => {
  const listed = async (cookie = admin) => body(await invitations.GET(request('/api/admin/staff/invitations', { cookie }), undefined));
  const staffEmails = async () => (await body(await staffRoute.GET(request('/api/admin/staff', { cookie: admin }), undefined))).staff.map((p: { email: string }) => p.email);
  const act = (route: typeof resend | typeof revoke, userId: string, cookie = admin) =>
    route.POST(request(`/api/admin/staff/${userId}/invitation/x`, { cookie, body: {} }), params({ userId }));
  const audited = async (entityId: string) =>
    (await database.db.select().from(auditEvents).where(eq(auditEvents.entityId, entityId))).map((e) => ({ action: e.action, details: e.details }));

  it('are listed apart from the staff: who, role, invited by, until when; resend replaces the link; revoke withdraws it; all audited', async () => {
    const adminUser = await staffByEmail(database.db, 'admin@fernhollow.example');
    const before = Date.now();
    const invited = await invite.POST(request('/api/admin/staff/invite', { cookie: admin, body: { displayName: 'Wren Halloway', email: 'wren@fernhollow.example', role: 'technician' } }), undefined);
    expect(invited.status).toBe(201);
    const wren = await staffByEmail(database.db, 'wren@fernhollow.example');
    const { token: first } = await tokenFromMail(4);

    // Not among the staff (where it used to show as a deactivated person), but as an invitation.
    expect(await staffEmails()).not.toContain('wren@fernhollow.example');
    const [row] = (await listed()).invitations.filter((i: { id: string }) => i.id === wren.id);
    expect(row).toMatchObject({ displayName: 'Wren Halloway', email: 'wren@fernhollow.example', role: 'technician', invitedBy: adminUser.displayName, state: 'waiting', revokedAt: null });
    // The link lasts INVITE_HOURS (72 h, the product's rule) from when it was sent.
    const hours = (new Date(row.expiresAt).getTime() - before) / 3_600_000;
    expect(hours).toBeGreaterThanOrEqual(INVITE_HOURS);
    expect(hours).toBeLessThan(INVITE_HOURS + 0.1);
    // The address is taken by the invitation: inviting again says where to resend from.
    const again = await invite.POST(request('/api/admin/staff/invite', { cookie: admin, body: { displayName: 'Wren H', email: 'wren@fernhollow.example', role: 'technician' } }), undefined);
    expect(again.status).toBe(409);
    expect((await body(again)).error.code).toBe('already_invited');

    // Resend: a new link by e-mail; the first one stops working.
    expect((await act(resend, wren.id)).status).toBe(200);
    const { token: second, message } = await tokenFromMail(5);
    expect(message.to).toMatchObject({ text: 'wren@fernhollow.example' });
    expect(second).not.toBe(first);
    expect((await set(first, 'wren-password-long-1')).status).toBe(410);

    // Revoke: the second link stops working too; the invitation stays listed as revoked.
    expect((await act(revoke, wren.id)).status).toBe(200);
    expect((await set(second, 'wren-password-long-1')).status).toBe(410);
    const [revoked] = (await listed()).invitations.filter((i: { id: string }) => i.id === wren.id);
    expect(revoked.state).toBe('revoked');
    const twice = await act(revoke, wren.id);
    expect(twice.status).toBe(409);
    expect((await body(twice)).error.code).toBe('already_revoked');
    expect((await staffByEmail(database.db, 'wren@fernhollow.example')).active).toBe(false);

    // Sent again after a revoke, accepted: no longer an invitation, now staff.
    expect((await act(resend, wren.id)).status).toBe(200);
    const { token: third } = await tokenFromMail(6);
    expect((await set(third, 'wren-password-long-1')).status).toBe(200);
    expect((await listed()).invitations.map((i: { id: string }) => i.id)).not.toContain(wren.id);
    expect(await staffEmails()).toContain('wren@fernhollow.example');
    const accepted = await act(resend, wren.id);
    expect(accepted.status).toBe(409);
    expect((await body(accepted)).error.code).toBe('not_invited');

    expect(await audited(wren.id)).toEqual(
      expect.arrayContaining([
        { action: 'staff.invited', details: expect.objectContaining({ role: 'technician' }) },
        { action: 'staff.invitation-resent', details: expect.objectContaining({ revokedLinks: 1 }) },
        { action: 'staff.invitation-revoked', details: expect.objectContaining({ revokedLinks: 1 }) },
        { action: 'staff.invitation-resent', details: expect.objectContaining({ revokedLinks: 0 }) },
        { action: 'staff.invitation-accepted', details: expect.anything() },
      ]),
    );
  });

  it('an unanswered link shows as expired after 72 hours (clock passed in); only administrators see or change invitations', async () => {
    const adminUser = await staffByEmail(database.db, 'admin@fernhollow.example');
    const actor = { userId: adminUser.id, clinicId: adminUser.clinicId, role: adminUser.role, displayName: adminUser.displayName, email: adminUser.email };
    const t0 = new Date();
    const { id } = await inviteStaff(actor, { displayName: 'Isolde Marr', email: 'isolde@fernhollow.example', role: 'veterinarian' }, t0);
    const at = async (ms: number) => (await listInvitations(actor, new Date(t0.getTime() + ms))).find((i) => i.id === id)!.state;
    expect(await at(INVITE_HOURS * 3_600_000 - 1)).toBe('waiting');
    expect(await at(INVITE_HOURS * 3_600_000)).toBe('expired');

    // The technician's password was reset earlier in this file.
    const tech = await signIn('tech@fernhollow.example', 'tech-new-password-1');
    expect((await invitations.GET(request('/api/admin/staff/invitations', { cookie: tech }), undefined)).status).toBe(403);
    expect((await act(revoke, id, tech)).status).toBe(403);
    expect((await act(resend, '00000000-0000-4000-8000-000000000000')).status).toBe(404);
    expect((await act(resend, 'not-a-uuid')).status).toBe(400);
    // Someone added directly (seeded staff) has no invitation to resend.
    expect((await act(resend, adminUser.id)).status).toBe(409);
  });
});
