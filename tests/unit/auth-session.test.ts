import { randomUUID } from 'node:crypto';
import { sealData } from 'iron-session';
import { afterEach, describe, expect, it, vi } from 'vitest';

// Before the module first needs it, so nothing is written to the developer's data directory.
process.env.SESSION_SECRET = 'unit-test-session-secret-0123456789abcdef';

const { SESSION_COOKIE, SESSION_TTL_SECONDS, cookieValue, sealSession, sessionCookie, unsealSession } = await import(
  '@/lib/auth/session'
);

const session = () => ({ userId: randomUUID(), clinicId: randomUUID(), issuedAt: Date.now() });

/** Replaces one character of the seal's last (HMAC) component or its encrypted body. */
function tamper(seal: string, part: 'hmac' | 'body'): string {
  const [sealed, version] = seal.split('~');
  const parts = sealed.split('*');
  const index = part === 'hmac' ? parts.length - 1 : 4;
  const chars = [...parts[index]];
  chars[3] = chars[3] === 'A' ? 'B' : 'A';
  parts[index] = chars.join('');
  return `${parts.join('*')}${version === undefined ? '' : `~${version}`}`;
}

afterEach(() => {
  vi.useRealTimers();
  vi.unstubAllEnvs();
});

describe('session seal', () => {
  it('unseals what it sealed', async () => {
    const data = session();
    expect(await unsealSession(await sealSession(data))).toEqual(data);
  });

  it('gives null for a tampered HMAC or a tampered body', async () => {
    const seal = await sealSession(session());
    expect(tamper(seal, 'hmac')).not.toBe(seal);
    expect(await unsealSession(tamper(seal, 'hmac'))).toBeNull();
    expect(await unsealSession(tamper(seal, 'body'))).toBeNull();
  });

  it('gives null for a seal made with another secret', async () => {
    const foreign = await sealData(session(), { password: 'another-secret-another-secret-0123456789', ttl: SESSION_TTL_SECONDS });
    expect(await unsealSession(foreign)).toBeNull();
  });

  it('gives null for nothing, garbage, and a valid seal without a user', async () => {
    expect(await unsealSession(null)).toBeNull();
    expect(await unsealSession(undefined)).toBeNull();
    expect(await unsealSession('')).toBeNull();
    expect(await unsealSession('Fe26.2**garbage')).toBeNull();
    expect(await unsealSession('bwb_someBridgeTokenNotASeal')).toBeNull();
    const noUser = await sealData({ clinicId: randomUUID() }, { password: process.env.SESSION_SECRET!, ttl: SESSION_TTL_SECONDS });
    expect(await unsealSession(noUser)).toBeNull();
  });

  it('expires after the 12-hour TTL', async () => {
    vi.useFakeTimers({ toFake: ['Date'] });
    vi.setSystemTime(new Date('2030-01-01T08:00:00Z'));
    const data = session();
    const seal = await sealSession(data);
    vi.setSystemTime(new Date('2030-01-01T19:00:00Z')); // 11 h later
    expect(await unsealSession(seal)).toEqual(data);
    vi.setSystemTime(new Date('2030-01-01T20:05:00Z')); // 12 h 5 min later (iron allows a small skew)
    expect(await unsealSession(seal)).toBeNull();
  });

  it('refuses a SESSION_SECRET shorter than 32 characters (iron-session needs ≥ 32)', async () => {
    vi.resetModules();
    vi.stubEnv('SESSION_SECRET', 'too-short');
    const fresh = await import('@/lib/auth/session');
    expect(() => fresh.sessionSecret()).toThrow(/32/);
  });
});

describe('cookieValue (Cookie header, RFC 6265 §4.2.1 / §5.4)', () => {
  it('picks the named cookie from "name=value; name=value"', () => {
    expect(cookieValue('theme=dark; benchwire_session=abc; lang=en', SESSION_COOKIE)).toBe('abc');
    expect(cookieValue('benchwire_session=abc', SESSION_COOKIE)).toBe('abc');
  });

  it('gives null when the header or the cookie is missing', () => {
    expect(cookieValue(null, SESSION_COOKIE)).toBeNull();
    expect(cookieValue(undefined, SESSION_COOKIE)).toBeNull();
    expect(cookieValue('', SESSION_COOKIE)).toBeNull();
    expect(cookieValue('theme=dark', SESSION_COOKIE)).toBeNull();
  });

  it('matches the whole name, case-sensitively (RFC 6265 §5.3 compares names exactly)', () => {
    expect(cookieValue('xbenchwire_session=evil; benchwire_session_old=old', SESSION_COOKIE)).toBeNull();
    expect(cookieValue('BENCHWIRE_SESSION=abc', SESSION_COOKIE)).toBeNull();
  });

  it('keeps "=" inside the value (only the first "=" separates name and value, RFC 6265 §5.2)', () => {
    expect(cookieValue('benchwire_session=a=b==', SESSION_COOKIE)).toBe('a=b==');
  });

  it('takes the first of two same-named cookies (RFC 6265 §5.4: most specific path first)', () => {
    expect(cookieValue('benchwire_session=first; benchwire_session=second', SESSION_COOKIE)).toBe('first');
  });

  it('undoes the percent-encoding Next applies when it sets the cookie', () => {
    expect(cookieValue('benchwire_session=a%3Db%2Bc', SESSION_COOKIE)).toBe('a=b+c');
  });

  it('tolerates missing or extra spaces around pairs', () => {
    expect(cookieValue('theme=dark;benchwire_session=abc', SESSION_COOKIE)).toBe('abc');
    expect(cookieValue('theme=dark;   benchwire_session=abc  ', SESSION_COOKIE)).toBe('abc');
  });
});

describe('sessionCookie attributes', () => {
  it('is HttpOnly, SameSite=Lax, Path=/ and lives 12 hours (RFC 6265bis §4.1.2)', () => {
    expect(sessionCookie('v')).toMatchObject({ name: SESSION_COOKIE, value: 'v', httpOnly: true, sameSite: 'lax', path: '/', maxAge: 12 * 60 * 60 });
  });

  it('is Secure in production unless explicitly disabled (RFC 6265 §4.1.2.5)', () => {
    vi.stubEnv('NODE_ENV', 'production');
    expect(sessionCookie('v').secure).toBe(true);
    vi.stubEnv('BENCHWIRE_INSECURE_COOKIES', '1');
    expect(sessionCookie('v').secure).toBe(false);
  });

  it('is not Secure in development, where the demo runs on plain http://localhost', () => {
    vi.stubEnv('NODE_ENV', 'development');
    expect(sessionCookie('v').secure).toBe(false);
  });
});
