// Brute force (issue: 200 wrong passwords, no 429; 16 parallel sign-ins starved the server). OWASP
// Authentication Cheat Sheet: limit failed attempts per account and per source (from memory, verify);
// RFC 6585 §4: 429 Too Many Requests with Retry-After; RFC 9110 §10.2.3 Retry-After in seconds.
import { spawn } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { and, eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body } from './support';
import { POST as signInRoute } from '@/app/api/auth/sign-in/route';
import type { Database } from '@/db/client';
import { DEMO_PASSWORD } from '@/db/seed';
import { auditEvents, rateLimits, staffUsers } from '@/db/schema';
import { ACCOUNT_FAILURES, ADDRESS_FAILURES, HASH_CONCURRENCY, HASH_QUEUE, recordFailedSignIn, withHashSlot } from '@/lib/auth/throttle';
import { ApiError } from '@/lib/http';
import { seededDatabase } from '../helpers/db';
import { request } from '../helpers/http';

let database: Database;
beforeAll(async () => {
  ({ database } = await seededDatabase());
});

const attempt = (email: string, password: string, address = '192.0.2.10') =>
  signInRoute(request('/api/auth/sign-in', { body: { email, password }, headers: { 'x-benchwire-client-address': address } }), undefined);

describe('sign-in throttling', () => {
  it(`after ${ACCOUNT_FAILURES} wrong passwords the account answers 429 with Retry-After, even to the right password`, async () => {
    const email = 'tech@fernhollow.example';
    for (let i = 0; i < ACCOUNT_FAILURES; i++) expect((await attempt(email, `wrong-${i}`)).status).toBe(401);
    const blocked = await attempt(email, DEMO_PASSWORD);
    expect(blocked.status).toBe(429);
    expect(Number(blocked.headers.get('retry-after'))).toBeGreaterThan(0);
    expect((await body(blocked)).error.code).toBe('too_many_attempts');
    // Held in the database (so every instance on it sees the same count).
    const [row] = await database.db.select().from(rateLimits).where(eq(rateLimits.key, `account:${email}`));
    expect(row.points).toBeGreaterThanOrEqual(ACCOUNT_FAILURES);
    // From another address too: it is the account that is protected.
    expect((await attempt(email, DEMO_PASSWORD, '198.51.100.7')).status).toBe(429);
  });

  it('each failed sign-in to a known account is an audit event in its clinic (without the password)', async () => {
    const [tech] = await database.db.select().from(staffUsers).where(eq(staffUsers.email, 'tech@fernhollow.example'));
    const events = await database.db
      .select()
      .from(auditEvents)
      .where(and(eq(auditEvents.action, 'staff.sign_in_failed'), eq(auditEvents.entityId, tech.id)));
    expect(events.length).toBe(ACCOUNT_FAILURES);
    expect(JSON.stringify(events)).not.toContain('wrong-');
    expect(events[0].details).toMatchObject({ reason: 'wrong_password', address: '192.0.2.10' });
  });

  it('a successful sign-in clears the account count', async () => {
    const email = 'vet@fernhollow.example';
    for (let i = 0; i < 3; i++) await attempt(email, 'wrong');
    expect((await attempt(email, DEMO_PASSWORD)).status).toBe(200);
    expect(await database.db.select().from(rateLimits).where(eq(rateLimits.key, `account:${email}`))).toEqual([]);
  });

  it(`after ${ADDRESS_FAILURES} failures from one address (any accounts) that address answers 429`, async () => {
    const address = '203.0.113.99';
    // The first ADDRESS_FAILURES - 1 counted directly (each real attempt costs a scrypt), the last one for real.
    for (let i = 0; i < ADDRESS_FAILURES - 1; i++) await recordFailedSignIn(`nobody${i}@example.org`, address);
    expect((await attempt('admin@fernhollow.example', 'wrong', address)).status).toBe(401);
    expect((await attempt('admin@fernhollow.example', DEMO_PASSWORD, address)).status).toBe(429);
    expect((await attempt('admin@fernhollow.example', DEMO_PASSWORD, '203.0.113.100')).status).toBe(200);
  }, 120_000);
});

describe('password hashing is bounded', () => {
  it(`at most ${HASH_CONCURRENCY} run at once; beyond a queue of ${HASH_QUEUE} a burst gets 503 at once`, async () => {
    let running = 0;
    let most = 0;
    const gates: (() => void)[] = [];
    const task = () =>
      withHashSlot(async () => {
        running++;
        most = Math.max(most, running);
        await new Promise<void>((resolve) => gates.push(resolve));
        running--;
      });
    const results = Array.from({ length: HASH_CONCURRENCY + HASH_QUEUE + 5 }, () => task().then(() => 'done', (e: unknown) => e));
    // The five beyond the queue are refused at once, while the others still wait.
    const settled = await Promise.all(results.slice(-5));
    for (const refused of settled as unknown[]) expect(refused).toBeInstanceOf(ApiError);
    expect((settled as ApiError[])[0].status).toBe(503);
    while (gates.length || running) {
      gates.shift()?.();
      await new Promise((r) => setImmediate(r));
    }
    expect(await Promise.all(results.slice(0, -5))).toEqual(Array(HASH_CONCURRENCY + HASH_QUEUE).fill('done'));
    expect(most).toBe(HASH_CONCURRENCY);
  });
});

describe('start-up', () => {
  it('a SESSION_SECRET under 32 characters stops the server with a clear message', async () => {
    const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'benchwire-secret-'));
    const child = spawn(process.execPath, ['--import', 'tsx', 'server.ts'], {
      env: { ...process.env, TSX_TSCONFIG_PATH: 'tsconfig.server.json', SESSION_SECRET: 'too-short', DATA_DIR: dataDir, PORT: '0' },
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let stderr = '';
    child.stderr.on('data', (chunk) => (stderr += chunk));
    const code = await new Promise((resolve) => child.on('exit', resolve));
    expect(code).toBe(1);
    expect(stderr).toContain('SESSION_SECRET must be at least 32 characters long (it has 9)');
    // It stopped before opening the database.
    expect(fs.existsSync(path.join(dataDir, 'pgdata'))).toBe(false);
  }, 60_000);
});
