import { and, eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, staffByEmail } from './support';
import { GET as me } from '@/app/api/auth/me/route';
import { POST as signInRoute } from '@/app/api/auth/sign-in/route';
import { POST as signOutRoute } from '@/app/api/auth/sign-out/route';
import type { Database } from '@/db/client';
import { DEMO_PASSWORD } from '@/db/seed';
import { auditEvents, staffUsers } from '@/db/schema';
import { seededDatabase } from '../helpers/db';
import { request, signIn } from '../helpers/http';

let database: Database;
beforeAll(async () => {
  ({ database } = await seededDatabase());
});

const signInWith = (email: string, password: string) =>
  signInRoute(request('/api/auth/sign-in', { body: { email, password } }), undefined);

/** The attributes of a Set-Cookie header, names lower-cased (RFC 6265 §5.2: attribute names are case-insensitive). */
function cookieAttributes(setCookie: string) {
  const [pair, ...rest] = setCookie.split(';').map((s) => s.trim());
  const eq = pair.indexOf('=');
  const attributes = new Map<string, string>();
  for (const a of rest) {
    const i = a.indexOf('=');
    attributes.set((i < 0 ? a : a.slice(0, i)).toLowerCase(), i < 0 ? '' : a.slice(i + 1));
  }
  return { name: pair.slice(0, eq), value: pair.slice(eq + 1), attributes };
}

/** Changes one character in the middle of the sealed value (the Cookie header is "name=value"). */
function tamperCookie(cookie: string): string {
  const eq = cookie.indexOf('=');
  const value = cookie.slice(eq + 1);
  const at = Math.floor(value.length / 2);
  const swapped = value[at] === 'A' ? 'B' : 'A';
  return `${cookie.slice(0, eq + 1)}${value.slice(0, at)}${swapped}${value.slice(at + 1)}`;
}

describe('sign-in', () => {
  it('signs in with the right password and sets the session cookie', async () => {
    const response = await signInWith('tech@fernhollow.example', DEMO_PASSWORD);
    expect(response.status).toBe(200);
    const json = await body(response);
    expect(json.user).toMatchObject({ displayName: 'Pia Hartwell', role: 'technician' });
    expect(JSON.stringify(json)).not.toMatch(/passwordHash|scrypt/);

    const cookie = cookieAttributes(response.headers.get('set-cookie') ?? '');
    expect(cookie.name).toBe('benchwire_session');
    expect(cookie.value.length).toBeGreaterThan(20);
    // RFC 6265bis §4.1.2.6 HttpOnly: not readable from page scripts.
    expect(cookie.attributes.has('httponly')).toBe(true);
    // RFC 6265bis §4.1.2.7 SameSite=Lax: not sent on cross-site POSTs (CSRF defence).
    expect(cookie.attributes.get('samesite')?.toLowerCase()).toBe('lax');
    // RFC 6265 §4.1.2.4 Path=/: sent to every API route.
    expect(cookie.attributes.get('path')).toBe('/');
    // RFC 6265 §4.1.2.2 Max-Age: one 12-hour shift.
    expect(cookie.attributes.get('max-age')).toBe(String(12 * 60 * 60));
  });

  it('records the sign-in: lastSignInAt and an audit event', async () => {
    const before = await staffByEmail(database.db, 'vet2@fernhollow.example');
    expect(before.lastSignInAt).toBeNull();
    await signIn('vet2@fernhollow.example');
    const after = await staffByEmail(database.db, 'vet2@fernhollow.example');
    expect(after.lastSignInAt).toBeInstanceOf(Date);
    const events = await database.db
      .select()
      .from(auditEvents)
      .where(and(eq(auditEvents.action, 'staff.signed_in'), eq(auditEvents.actorUserId, after.id)));
    expect(events).toHaveLength(1);
  });

  it('ignores the case of the e-mail address', async () => {
    // Common practice, no source (RFC 5321 §2.4 lets local parts be case-sensitive; the product folds case).
    expect((await signInWith('TECH@Fernhollow.EXAMPLE', DEMO_PASSWORD)).status).toBe(200);
  });

  it('gives the same 401 body for a wrong password and an unknown e-mail, and sets no cookie', async () => {
    // OWASP Authentication Cheat Sheet, "Authentication and Error Messages": one generic answer (from memory).
    const wrongPassword = await signInWith('tech@fernhollow.example', 'not-the-password');
    const unknownEmail = await signInWith('nobody@fernhollow.example', DEMO_PASSWORD);
    expect(wrongPassword.status).toBe(401); // RFC 9110 §15.5.2
    expect(unknownEmail.status).toBe(401);
    const a = await body(wrongPassword);
    const b = await body(unknownEmail);
    expect(a).toEqual(b);
    expect(a.error.code).toBe('invalid_credentials');
    expect(wrongPassword.headers.get('set-cookie')).toBeNull();
    expect(unknownEmail.headers.get('set-cookie')).toBeNull();
  });

  it('tells a deactivated staff member so (403) only with the right password; a wrong one gets the generic 401', async () => {
    // Issue 8: the sign-in form must say when the account is deactivated. Only someone who knows the
    // password learns it, so the generic answer above still hides which addresses exist.
    const reference = await body(await signInWith('nobody@fernhollow.example', DEMO_PASSWORD));
    await database.db.update(staffUsers).set({ active: false }).where(eq(staffUsers.email, 'vet2@fernhollow.example'));
    try {
      const response = await signInWith('vet2@fernhollow.example', DEMO_PASSWORD);
      expect(response.status).toBe(403); // RFC 9110 §15.5.4: understood, refused
      const { error } = await body(response);
      expect(error.code).toBe('account_deactivated');
      expect(error.message).toMatch(/deactivated/);
      expect(response.headers.get('set-cookie')).toBeNull();
      const wrong = await signInWith('vet2@fernhollow.example', 'not-the-password');
      expect(wrong.status).toBe(401);
      expect(await body(wrong)).toEqual(reference);
    } finally {
      await database.db.update(staffUsers).set({ active: true }).where(eq(staffUsers.email, 'vet2@fernhollow.example'));
    }
  });

  it('says the e-mail or password is wrong, not that a session ended', async () => {
    const { error } = await body(await signInWith('tech@fernhollow.example', 'not-the-password'));
    expect(error.message).toMatch(/e-mail address or the password is wrong/);
    expect(error.message).not.toMatch(/session/i);
  });

  it('answers 400 for a body that is not a sign-in, 415 for a non-JSON body', async () => {
    const missing = await signInRoute(request('/api/auth/sign-in', { body: { email: 'tech@fernhollow.example' } }), undefined);
    expect(missing.status).toBe(400); // RFC 9110 §15.5.1
    expect((await body(missing)).error.issues.map((i: { path: string }) => i.path)).toEqual(['password']);
    const form = await signInRoute(
      request('/api/auth/sign-in', { body: 'email=tech%40fernhollow.example&password=x', headers: { 'content-type': 'application/x-www-form-urlencoded' } }),
      undefined,
    );
    expect(form.status).toBe(415); // RFC 9110 §15.5.16
  });
});

describe('me', () => {
  it('returns the signed-in staff member', async () => {
    const cookie = await signIn('vet@fernhollow.example');
    const response = await me(request('/api/auth/me', { cookie }), undefined);
    expect(response.status).toBe(200);
    const { user } = await body(response);
    expect(user).toMatchObject({ email: 'vet@fernhollow.example', displayName: 'Dr. Ilse Corvan', role: 'veterinarian' });
  });

  it('is 401 JSON without a cookie', async () => {
    const response = await me(request('/api/auth/me'), undefined);
    expect(response.status).toBe(401); // RFC 9110 §15.5.2
    expect(response.headers.get('content-type')).toMatch(/^application\/json/);
    expect((await body(response)).error.code).toBe('unauthenticated');
  });

  it('is 401 with a tampered cookie', async () => {
    const cookie = await signIn('vet@fernhollow.example');
    const tampered = tamperCookie(cookie);
    expect(tampered).not.toBe(cookie);
    const response = await me(request('/api/auth/me', { cookie: tampered }), undefined);
    expect(response.status).toBe(401);
    expect((await body(response)).error.code).toBe('unauthenticated');
  });

  it('is 401 for a garbage session cookie', async () => {
    const response = await me(request('/api/auth/me', { cookie: 'benchwire_session=hello' }), undefined);
    expect(response.status).toBe(401);
  });

  it('stops honouring a session once the staff member is deactivated, and follows role changes', async () => {
    const cookie = await signIn('vet2@fernhollow.example');
    await database.db.update(staffUsers).set({ role: 'technician' }).where(eq(staffUsers.email, 'vet2@fernhollow.example'));
    const changed = await me(request('/api/auth/me', { cookie }), undefined);
    expect((await body(changed)).user.role).toBe('technician');
    await database.db.update(staffUsers).set({ active: false }).where(eq(staffUsers.email, 'vet2@fernhollow.example'));
    try {
      expect((await me(request('/api/auth/me', { cookie }), undefined)).status).toBe(401);
    } finally {
      await database.db
        .update(staffUsers)
        .set({ active: true, role: 'veterinarian' })
        .where(eq(staffUsers.email, 'vet2@fernhollow.example'));
    }
  });
});

describe('sign-out', () => {
  it('clears the cookie: same name and path, empty value, Max-Age=0', async () => {
    const cookie = await signIn('tech@fernhollow.example');
    const response = await signOutRoute(request('/api/auth/sign-out', { method: 'POST', cookie }), undefined);
    expect(response.status).toBe(200);
    const cleared = cookieAttributes(response.headers.get('set-cookie') ?? '');
    expect(cleared.name).toBe('benchwire_session');
    expect(cleared.value).toBe('');
    // RFC 6265 §5.2.2: Max-Age ≤ 0 expires the cookie at once; §5.3 step 11: same name+path replaces it.
    expect(cleared.attributes.get('max-age')).toBe('0');
    expect(cleared.attributes.get('path')).toBe('/');
    expect(cleared.attributes.has('httponly')).toBe(true);
  });

  it('leaves a browser that obeys the cleared cookie signed out', async () => {
    const response = await signOutRoute(request('/api/auth/sign-out', { method: 'POST' }), undefined);
    const cleared = cookieAttributes(response.headers.get('set-cookie') ?? '');
    // What the browser sends next: the cookie with the new, empty value (or nothing at all).
    const next = await me(request('/api/auth/me', { cookie: `${cleared.name}=${cleared.value}` }), undefined);
    expect(next.status).toBe(401);
  });
});
