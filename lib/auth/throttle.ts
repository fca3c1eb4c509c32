import 'server-only';
import { RateLimiterDrizzle, type RateLimiterRes } from 'rate-limiter-flexible';
import { db, type Db } from '@/db/client';
import { rateLimits } from '@/db/schema';
import { ApiError } from '@/lib/http';

// Sign-in throttling. Failed sign-ins are counted per account and per client address in the database
// (rate-limiter-flexible's Drizzle store), so the limits hold across app instances and restarts.
// OWASP Authentication Cheat Sheet, "Protect against automated attacks": limit failed attempts per
// account and per source, answer 429 with Retry-After (RFC 6585 §4) — from memory, verify.

export const ACCOUNT_FAILURES = 10;
export const ADDRESS_FAILURES = 100;
export const WINDOW_SECONDS = 15 * 60;

const limiters = new WeakMap<Db, { account: RateLimiterDrizzle; address: RateLimiterDrizzle }>();

async function limitersFor() {
  const database = await db();
  let pair = limiters.get(database);
  if (!pair) {
    const common = { storeClient: database, schema: rateLimits, duration: WINDOW_SECONDS, blockDuration: WINDOW_SECONDS };
    pair = {
      account: new RateLimiterDrizzle({ ...common, keyPrefix: 'account', points: ACCOUNT_FAILURES }),
      address: new RateLimiterDrizzle({ ...common, keyPrefix: 'address', points: ADDRESS_FAILURES }),
    };
    limiters.set(database, pair);
  }
  return pair;
}

function tooMany(res: RateLimiterRes, what: string): ApiError {
  const seconds = Math.max(1, Math.ceil(res.msBeforeNext / 1000));
  return new ApiError(429, 'too_many_attempts', `Too many failed sign-ins ${what}. Try again in ${Math.ceil(seconds / 60)} minute(s).`, [], { retryAfterSeconds: seconds }, {
    'retry-after': String(seconds),
  });
}

/** Throws 429 when this account or this address has used up its failed attempts. */
export async function checkSignInAllowed(email: string, address: string): Promise<void> {
  const { account, address: byAddress } = await limitersFor();
  const [a, b] = await Promise.all([account.get(email), byAddress.get(address)]);
  if (a && a.consumedPoints >= ACCOUNT_FAILURES) throw tooMany(a, 'for this account');
  if (b && b.consumedPoints >= ADDRESS_FAILURES) throw tooMany(b, 'from this address');
}

/** Counts one failed sign-in against the account and the address. */
export async function recordFailedSignIn(email: string, address: string): Promise<void> {
  const { account, address: byAddress } = await limitersFor();
  // consume() rejects with the RateLimiterRes once the points are used up: that is the count, not an error.
  await Promise.all([account.consume(email).catch(() => {}), byAddress.consume(address).catch(() => {})]);
}

/** A successful sign-in clears the account's count (the address's stays). */
export async function clearAccountFailures(email: string): Promise<void> {
  const { account } = await limitersFor();
  await account.delete(email);
}

/**
 * The client's address as server.ts recorded it from the socket (x-benchwire-client-address, set on
 * every request so a client cannot supply it); "unknown" when the handler runs outside server.ts.
 */
export function clientAddress(request: Request): string {
  return request.headers.get('x-benchwire-client-address') ?? 'unknown';
}

// Password hashing is deliberately slow (scrypt, lib/auth/password.ts) and runs on libuv's thread pool,
// shared with file I/O and DNS. At most HASH_CONCURRENCY run at once; a burst beyond the queue is
// answered 503 at once instead of starving every other request.
export const HASH_CONCURRENCY = 2;
export const HASH_QUEUE = 16;
let running = 0;
const waiting: (() => void)[] = [];

export async function withHashSlot<T>(work: () => Promise<T>): Promise<T> {
  if (running >= HASH_CONCURRENCY) {
    if (waiting.length >= HASH_QUEUE) {
      throw new ApiError(503, 'busy', 'Too many sign-ins at once. Try again in a moment.', [], {}, { 'retry-after': '1' });
    }
    await new Promise<void>((resolve) => waiting.push(resolve));
  } else {
    running++;
  }
  try {
    return await work();
  } finally {
    const next = waiting.shift();
    if (next) next();
    else running--;
  }
}
