import fs from 'node:fs';
import { eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { body, staffByEmail } from './support';
import * as invite from '@/app/api/admin/staff/invite/route';
import * as resetRoute from '@/app/api/auth/password-reset/route';
import * as setPassword from '@/app/api/auth/set-password/route';
import type { Database } from '@/db/client';
import { outboundMail, staffTokens } from '@/db/schema';
import { hashBridgeToken } from '@/lib/auth/tokens';
import { requestPasswordReset, setPasswordWithToken } from '@/lib/auth/staff-links';
import { deliverDueMail, transportFromEnv } from '@/lib/mail/queue';
import { seededDatabase } from '../helpers/db';
import { request, signIn } from '../helpers/http';
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
