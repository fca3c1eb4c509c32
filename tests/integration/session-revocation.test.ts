// Regression: Design gap: sessions are stateless iron seals (lib/auth/session.ts). POST /api/auth/sign-out only sends an
// expired cookie; the seal itself stays valid until its 12-hour TTL, so a copied cookie (shared lab PC, proxy
// log, stolen from a kiosk browser) keeps working after the person signed out. OWASP ASVS 4.0 V3.3.1: "logout and
// expiration invalidate the session token" (from memory). Needs server state, e.g. a session id or a per-user
// session version kept in the database and checked in actorFromSeal.
import { beforeAll, describe, expect, it } from 'vitest';
import './support';
import { GET as me } from '@/app/api/auth/me/route';
import { POST as signOut } from '@/app/api/auth/sign-out/route';
import { seededDatabase } from '../helpers/db';
import { request, signIn } from '../helpers/http';

beforeAll(async () => {
  await seededDatabase();
});

describe('sign-out', () => {
  it('makes the signed-out seal useless even if someone kept a copy', async () => {
    const cookie = await signIn('tech@fernhollow.example');
    expect((await me(request('/api/auth/me', { cookie }), undefined)).status).toBe(200);
    expect((await signOut(request('/api/auth/sign-out', { method: 'POST', cookie }), undefined)).status).toBe(200);
    expect((await me(request('/api/auth/me', { cookie }), undefined)).status).toBe(401);
  });
});
