import 'server-only';
import fs from 'node:fs';
import path from 'node:path';
import { randomBytes } from 'node:crypto';
import { sealData, unsealData } from 'iron-session';
import { dataDir, isProduction } from '@/lib/config';

export const SESSION_COOKIE = 'benchwire_session';
/** One clinic shift; staff sign in again after it. */
export const SESSION_TTL_SECONDS = 12 * 60 * 60;

export interface SessionData {
  userId: string;
  clinicId: string;
  /** The staff_sessions row this cookie belongs to; signing out ends it. */
  sessionId?: string;
  issuedAt: number;
}

let cachedSecret: string | undefined;

/** SESSION_SECRET from the environment, else one generated once and kept in the data dir (demo and single PC). */
export function sessionSecret(): string {
  if (cachedSecret) return cachedSecret;
  const fromEnv = process.env.SESSION_SECRET;
  if (fromEnv) {
    if (fromEnv.length < 32) {
      throw new Error(`SESSION_SECRET must be at least 32 characters long (it has ${fromEnv.length}). Generate one with: openssl rand -base64 32`);
    }
    return (cachedSecret = fromEnv);
  }
  const file = path.join(dataDir(), 'session-secret');
  try {
    cachedSecret = fs.readFileSync(file, 'utf8').trim();
  } catch {
    fs.mkdirSync(path.dirname(file), { recursive: true });
    const secret = randomBytes(32).toString('base64url');
    try {
      fs.writeFileSync(file, secret, { mode: 0o600, flag: 'wx' });
      cachedSecret = secret;
    } catch {
      // Another process wrote it first: use theirs.
      cachedSecret = fs.readFileSync(file, 'utf8').trim();
    }
  }
  return cachedSecret;
}

export async function sealSession(data: SessionData): Promise<string> {
  return sealData(data, { password: sessionSecret(), ttl: SESSION_TTL_SECONDS });
}

export async function unsealSession(seal: string | undefined | null): Promise<SessionData | null> {
  if (!seal) return null;
  try {
    const data = await unsealData<Partial<SessionData>>(seal, { password: sessionSecret(), ttl: SESSION_TTL_SECONDS });
    return data.userId && data.clinicId ? (data as SessionData) : null;
  } catch {
    return null;
  }
}

/** Picks one cookie's value out of a Cookie header. */
export function cookieValue(header: string | null | undefined, name: string): string | null {
  if (!header) return null;
  for (const part of header.split(';')) {
    const eq = part.indexOf('=');
    if (eq > 0 && part.slice(0, eq).trim() === name) {
      const raw = part.slice(eq + 1).trim();
      try {
        return decodeURIComponent(raw);
      } catch {
        // A malformed escape is a bad cookie, not a server error: treat it as absent.
        return null;
      }
    }
  }
  return null;
}

export function sessionCookie(value: string, maxAge = SESSION_TTL_SECONDS) {
  return {
    name: SESSION_COOKIE,
    value,
    httpOnly: true,
    sameSite: 'lax' as const,
    secure: isProduction() && process.env.BENCHWIRE_INSECURE_COOKIES !== '1',
    path: '/',
    maxAge,
  };
}
