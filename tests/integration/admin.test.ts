import { createHash } from 'node:crypto';
import { eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, createOtherClinic, ingest, readingRecord, staffByEmail } from './support';
import { GET as listBridges, POST as createBridge } from '@/app/api/admin/bridges/route';
import { POST as revokeBridge } from '@/app/api/admin/bridges/[bridgeId]/revoke/route';
import { GET as listInstruments, POST as createInstrument } from '@/app/api/admin/instruments/route';
import { GET as listStaff, POST as createStaff } from '@/app/api/admin/staff/route';
import { PATCH as updateStaff } from '@/app/api/admin/staff/[userId]/route';
import { POST as signInRoute } from '@/app/api/auth/sign-in/route';
import type { Database } from '@/db/client';
import { DEMO_PASSWORD } from '@/db/seed';
import { bridges, readings } from '@/db/schema';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

let database: Database;
let adminCookie: string;
let other: Awaited<ReturnType<typeof createOtherClinic>>;

beforeAll(async () => {
  ({ database } = await seededDatabase());
  other = await createOtherClinic(database.db);
  adminCookie = await signIn('admin@fernhollow.example');
});

const signInWith = (email: string, password: string) =>
  signInRoute(request('/api/auth/sign-in', { body: { email, password } }), undefined);
const patch = (userId: string, change: unknown) =>
  updateStaff(request('/api/admin/staff/x', { method: 'PATCH', cookie: adminCookie, body: change }), params({ userId }));

describe('bridges', () => {
  let created: { bridge: { id: string; name: string; tokenHint: string }; token: string };

  it('creating one returns its token once: 201, no-store', async () => {
    const response = await createBridge(request('/api/admin/bridges', { cookie: adminCookie, body: { name: 'Lab PC (bench 3)' } }), undefined);
    expect(response.status).toBe(201);
    // RFC 9111 §5.2.2.5: no-store, so no cache keeps the token.
    expect(response.headers.get('cache-control')).toMatch(/no-store/);
    created = await body(response);
    expect(created.token).toMatch(/^bwb_[A-Za-z0-9_-]{43}$/);
    expect(created.bridge).toMatchObject({ name: 'Lab PC (bench 3)', tokenHint: created.token.slice(0, 10) });
    expect(JSON.stringify(created.bridge)).not.toContain(created.token);
  });

  it('stores only the SHA-256 of the token', async () => {
    const [row] = await database.db.select().from(bridges).where(eq(bridges.id, created.bridge.id));
    expect(row.tokenHash).toBe(createHash('sha256').update(created.token).digest('hex'));
    expect(Object.values(row).map(String)).not.toContain(created.token);
  });

  it('the list never shows a token or its hash', async () => {
    const response = await listBridges(request('/api/admin/bridges', { cookie: adminCookie }), undefined);
    expect(response.status).toBe(200);
    const text = await response.text();
    const listed = JSON.parse(text).bridges as Record<string, unknown>[];
    expect(listed.map((b) => b.name)).toEqual(['Lab PC (bench 1)', 'Lab PC (bench 3)']);
    expect(text).not.toContain(created.token);
    expect(text).not.toContain(createHash('sha256').update(created.token).digest('hex'));
    for (const b of listed) {
      expect(b).not.toHaveProperty('token');
      expect(b).not.toHaveProperty('tokenHash');
    }
    expect(text).not.toContain(other.bridge.id);
  });

  it('the new token works for ingest', async () => {
    const response = await ingest(created.token, [readingRecord('admin-bridge-0001')]);
    expect(response.status).toBe(200);
    const { results } = await body(response);
    const [row] = await database.db.select().from(readings).where(eq(readings.id, results[0].id));
    expect(row.bridgeId).toBe(created.bridge.id);
  });

  it('revoking stops the token; revoking again or another clinic’s bridge is 404', async () => {
    const response = await revokeBridge(request('/api/admin/bridges/x/revoke', { method: 'POST', cookie: adminCookie }), params({ bridgeId: created.bridge.id }));
    expect(response.status).toBe(200);
    expect((await body(response)).bridge.revokedAt).not.toBeNull();
    expect((await ingest(created.token, [readingRecord('admin-bridge-0002')])).status).toBe(401);
    const again = await revokeBridge(request('/api/admin/bridges/x/revoke', { method: 'POST', cookie: adminCookie }), params({ bridgeId: created.bridge.id }));
    expect(again.status).toBe(404);
    const foreign = await revokeBridge(request('/api/admin/bridges/x/revoke', { method: 'POST', cookie: adminCookie }), params({ bridgeId: other.bridge.id }));
    expect(foreign.status).toBe(404);
    expect((await ingest(other.bridgeToken, [readingRecord('admin-bridge-0003')])).status).toBe(200);
  });

  it('a bridge needs a name (400 on name)', async () => {
    const response = await createBridge(request('/api/admin/bridges', { cookie: adminCookie, body: { name: ' ' } }), undefined);
    expect(response.status).toBe(400);
    expect((await body(response)).error.issues.map((i: { path: string }) => i.path)).toEqual(['name']);
  });
});

describe('staff', () => {
  const newcomer = { displayName: 'Tobin Reyes-Hart', email: 'Tobin@Fernhollow.example', role: 'veterinarian', password: 'a-fresh-long-password' };

  it('a new staff member is created (201) and can sign in with the password set', async () => {
    const response = await createStaff(request('/api/admin/staff', { cookie: adminCookie, body: newcomer }), undefined);
    expect(response.status).toBe(201);
    const { staff } = await body(response);
    expect(staff).toMatchObject({ email: 'tobin@fernhollow.example', displayName: 'Tobin Reyes-Hart', role: 'veterinarian', active: true });
    expect(staff).not.toHaveProperty('passwordHash');
    const signedIn = await signInWith('tobin@fernhollow.example', newcomer.password);
    expect(signedIn.status).toBe(200);
    expect((await body(signedIn)).user).toMatchObject({ id: staff.id, role: 'veterinarian' });
  });

  it('the list shows the clinic’s staff, without password hashes or other clinics', async () => {
    const text = await (await listStaff(request('/api/admin/staff', { cookie: adminCookie }), undefined)).text();
    const { staff } = JSON.parse(text);
    expect(staff.map((s: { email: string }) => s.email).sort()).toEqual(
      ['admin@fernhollow.example', 'tech@fernhollow.example', 'tobin@fernhollow.example', 'vet2@fernhollow.example', 'vet@fernhollow.example'],
    );
    expect(text).not.toMatch(/passwordHash|scrypt\$/);
  });

  it('a duplicate e-mail, in any case, is 409 email_taken on email', async () => {
    for (const email of ['tobin@fernhollow.example', 'TOBIN@FERNHOLLOW.EXAMPLE', other.tech.email]) {
      const response = await createStaff(request('/api/admin/staff', { cookie: adminCookie, body: { ...newcomer, email } }), undefined);
      expect(response.status).toBe(409);
      const json = await body(response);
      expect(json.error.code).toBe('email_taken');
      expect(json.error.issues.map((i: { path: string }) => i.path)).toEqual(['email']);
    }
  });

  it('a short password is 400 on password', async () => {
    const response = await createStaff(request('/api/admin/staff', { cookie: adminCookie, body: { ...newcomer, email: 'short@fernhollow.example', password: 'short' } }), undefined);
    expect(response.status).toBe(400);
    expect((await body(response)).error.issues.map((i: { path: string }) => i.path)).toEqual(['password']);
  });

  it('an administrator cannot deactivate or demote themselves (409 self_lockout)', async () => {
    const admin = await staffByEmail(database.db, 'admin@fernhollow.example');
    for (const change of [{ active: false }, { role: 'technician' }]) {
      const response = await patch(admin.id, change);
      expect(response.status).toBe(409);
      expect((await body(response)).error.code).toBe('self_lockout');
    }
    expect(await staffByEmail(database.db, 'admin@fernhollow.example')).toMatchObject({ active: true, role: 'admin' });
  });

  it('deactivating someone else works (200) and they can no longer sign in', async () => {
    const vet2 = await staffByEmail(database.db, 'vet2@fernhollow.example');
    const response = await patch(vet2.id, { active: false });
    expect(response.status).toBe(200);
    expect((await body(response)).staff).toMatchObject({ id: vet2.id, active: false });
    // 403 account_deactivated: the sign-in form says the account is deactivated (issue 8).
    const refused = await signInWith('vet2@fernhollow.example', DEMO_PASSWORD);
    expect(refused.status).toBe(403);
    expect((await body(refused)).error.code).toBe('account_deactivated');
  });

  it('a role change takes effect (200)', async () => {
    const tech = await staffByEmail(database.db, 'tech@fernhollow.example');
    const response = await patch(tech.id, { role: 'veterinarian' });
    expect((await body(response)).staff.role).toBe('veterinarian');
  });

  it('another clinic’s staff member is 404, an unknown role 400', async () => {
    expect((await patch(other.tech.id, { active: false })).status).toBe(404);
    expect((await staffByEmail(database.db, other.tech.email)).active).toBe(true);
    const tech = await staffByEmail(database.db, 'tech@fernhollow.example');
    const bad = await patch(tech.id, { role: 'owner' });
    expect(bad.status).toBe(400);
    expect((await body(bad)).error.issues.map((i: { path: string }) => i.path)).toEqual(['role']);
  });
});

describe('instruments', () => {
  const instrument = {
    code: 'haem-analyzer',
    name: 'Haematology analyzer (bench 3)',
    analytes: ['WBC', 'RBC', 'HGB', 'PLT'],
    dialect: 'astm-e1394',
    serialNumber: 'SIM-0003',
    connection: { kind: 'tcp', host: '192.0.2.10', port: 5100 },
  };

  it('a new instrument is created (201) and listed', async () => {
    const response = await createInstrument(request('/api/admin/instruments', { cookie: adminCookie, body: instrument }), undefined);
    expect(response.status).toBe(201);
    const created = (await body(response)).instrument;
    expect(created).toMatchObject({ ...instrument, active: true });
    const list = await body(await listInstruments(request('/api/admin/instruments', { cookie: adminCookie }), undefined));
    expect(list.instruments.map((i: { code: string }) => i.code).sort()).toEqual(['chem-analyzer', 'crp-reader', 'haem-analyzer', 'hema-analyzer']);
  });

  it('readings under its code now link to it', async () => {
    const list = await body(await listInstruments(request('/api/admin/instruments', { cookie: adminCookie }), undefined));
    const haem = list.instruments.find((i: { code: string }) => i.code === 'haem-analyzer');
    const made = await body(await createBridge(request('/api/admin/bridges', { cookie: adminCookie, body: { name: 'Haem PC' } }), undefined));
    const { results } = await body(await ingest(made.token, [readingRecord('haem-00000001', { analyte: 'WBC', value: 9.1 }, 'haem-analyzer')]));
    const [row] = await database.db.select().from(readings).where(eq(readings.id, results[0].id));
    expect(row.instrumentId).toBe(haem.id);
  });

  it('a duplicate code is 409 code_taken on code', async () => {
    const response = await createInstrument(request('/api/admin/instruments', { cookie: adminCookie, body: { ...instrument, name: 'Another' } }), undefined);
    expect(response.status).toBe(409);
    const json = await body(response);
    expect(json.error.code).toBe('code_taken');
    expect(json.error.issues.map((i: { path: string }) => i.path)).toEqual(['code']);
  });

  it('the same code in another clinic does not clash', async () => {
    // The other clinic already has "crp-reader"; ours does too (seed): codes are per clinic.
    const list = await body(await listInstruments(request('/api/admin/instruments', { cookie: adminCookie }), undefined));
    expect(list.instruments.filter((i: { code: string }) => i.code === 'crp-reader')).toHaveLength(1);
    expect(list.instruments.map((i: { id: string }) => i.id)).not.toContain(other.instrument.id);
  });

  it('a bad body is 400 invalid_request naming the fields', async () => {
    const response = await createInstrument(
      request('/api/admin/instruments', { cookie: adminCookie, body: { code: 'Bad Code', name: 'X', analytes: [], dialect: 'astm-e1394', connection: { kind: 'tcp', host: 'h', port: 0 } } }),
      undefined,
    );
    expect(response.status).toBe(400);
    const json = await body(response);
    expect(json.error.code).toBe('invalid_request');
    expect(json.error.issues.map((i: { path: string }) => i.path).sort()).toEqual(['analytes', 'code', 'connection.port', 'name']);
  });

  it('a bridge of another clinic is refused (400 on bridgeId)', async () => {
    const response = await createInstrument(
      request('/api/admin/instruments', { cookie: adminCookie, body: { ...instrument, code: 'haem-2', bridgeId: other.bridge.id } }),
      undefined,
    );
    expect(response.status).toBe(400);
    expect((await body(response)).error.issues.map((i: { path: string }) => i.path)).toEqual(['bridgeId']);
  });
});
