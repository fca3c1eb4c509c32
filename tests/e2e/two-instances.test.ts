// Server mode: two app processes on one PostgreSQL (as behind a proxy in a clinic group). A reading a
// bridge posts to instance A reaches a technician's live feed opened on instance B: live events travel
// by PostgreSQL LISTEN/NOTIFY (PostgreSQL 15 manual, NOTIFY: "sent to all sessions listening"), not
// inside one process. Needs the production build and Debian's PostgreSQL; skipped without PostgreSQL.
import { randomBytes, randomUUID } from 'node:crypto';
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import WebSocket from 'ws';
import { DEMO_CRP_INSTRUMENT, DEMO_PASSWORD } from '@/db/seed';
import { postgresBin, startPostgres, type TestPostgres } from '../helpers/postgres';
import { startApp, type RunningApp } from './support';

describe.skipIf(!postgresBin())('two app instances on one PostgreSQL', () => {
  let server: TestPostgres | undefined;
  let a: RunningApp | undefined;
  let b: RunningApp | undefined;

  beforeAll(async () => {
    server = await startPostgres();
    const admin = new pg.Client({ connectionString: server.adminUrl });
    await admin.connect();
    await admin.query('create database benchwire');
    await admin.end();
    // Every instance seals sessions with the same secret, or a cookie from one is refused by the other.
    const env = { DATABASE_URL: server.urlFor('benchwire'), SESSION_SECRET: randomBytes(32).toString('base64url') };
    a = await startApp(env); // migrates and seeds the demo clinic
    b = await startApp(env); // finds the migrations applied and the clinic there
  }, 240_000);

  afterAll(async () => {
    await a?.stop();
    await b?.stop();
    server?.stop();
  });

  it('a reading posted to instance A reaches a WebSocket signed in on instance B', async () => {
    const signIn = await fetch(`${b!.baseUrl}/api/auth/sign-in`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', origin: b!.baseUrl },
      body: JSON.stringify({ email: 'tech@fernhollow.example', password: DEMO_PASSWORD }),
    });
    expect(signIn.status, await signIn.clone().text()).toBe(200);
    const cookie = signIn.headers.getSetCookie().map((c) => c.split(';')[0]).join('; ');

    const socket = new WebSocket(`ws://127.0.0.1:${b!.port}/api/live`, { headers: { cookie, origin: b!.baseUrl } });
    const messages: { type: string; id?: string; ids?: string[] }[] = [];
    socket.on('message', (data) => messages.push(JSON.parse(String(data))));
    await expect.poll(() => messages.some((m) => m.type === 'hello'), { timeout: 30_000 }).toBe(true);

    const key = randomUUID();
    const posted = await fetch(`${a!.baseUrl}/api/bridge/readings`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', authorization: `Bearer ${a!.bridgeToken}` },
      body: JSON.stringify({
        records: [{ key, instrument: DEMO_CRP_INSTRUMENT, receivedAt: new Date().toISOString(), payload: { kind: 'reading', analyte: 'cCRP', value: 18.4, unit: 'mg/L', raw: 'RESULT 18.4 mg/L\n' } }],
      }),
    });
    expect(posted.status, await posted.clone().text()).toBe(200);
    const { results } = (await posted.json()) as { results: { id: string; status: string }[] };
    expect(results[0].status).toBe('created');

    await expect
      .poll(() => messages.some((m) => m.type === 'reading.created' && (m.ids ?? [m.id]).includes(results[0].id)), { timeout: 30_000 })
      .toBe(true);
    socket.close();
  }, 120_000);
});
