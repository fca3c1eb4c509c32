import { and, eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, ingestOne, staffByEmail } from './support';
import * as instrumentRoute from '@/app/api/admin/instruments/[instrumentId]/route';
import * as serviceRoute from '@/app/api/admin/instruments/[instrumentId]/service/route';
import * as passwordRoute from '@/app/api/admin/staff/[userId]/password/route';
import * as me from '@/app/api/auth/me/route';
import * as ownPassword from '@/app/api/auth/password/route';
import { POST as signInRoute } from '@/app/api/auth/sign-in/route';
import * as bridgeConfig from '@/app/api/bridge/config/route';
import * as readingRoute from '@/app/api/readings/[readingId]/route';
import * as waitingRoute from '@/app/api/readings/waiting/route';
import * as patientsRoute from '@/app/api/patients/route';
import { POST as signOutRoute } from '@/app/api/auth/sign-out/route';
import type { Database } from '@/db/client';
import { auditEvents, instruments } from '@/db/schema';
import { DEMO_PASSWORD } from '@/db/seed';
import { seededDatabase } from '../helpers/db';
import { instrumentsOf, serverConfigSchema } from '@/bridge/config-sync';
import { params, request, signIn } from '../helpers/http';

// Issue 8, "People and instruments": an administrator sets a temporary password (the person's sessions
// end and they choose their own at the next sign-in); instruments can be edited and retired, and their
// readings keep their history. Status codes per RFC 9110 §15.5.

let database: Database;
let token: string;
let admin: string;

beforeAll(async () => {
  ({ database, bridgeToken: token } = await seededDatabase());
  admin = await signIn('admin@fernhollow.example');
});

const signInWith = (email: string, password: string) => signInRoute(request('/api/auth/sign-in', { body: { email, password } }), undefined);

describe('temporary passwords', () => {
  it('replace the old password, end the person’s sessions and require a new password at sign-in', async () => {
    const vet2 = await staffByEmail(database.db, 'vet2@fernhollow.example');
    const oldSession = await signIn('vet2@fernhollow.example');
    const set = await passwordRoute.POST(
      request('/api/admin/staff/x/password', { cookie: admin, body: { password: 'temporary-pass-2026' } }),
      params({ userId: vet2.id }),
    );
    expect(set.status).toBe(200);
    expect((await body(set)).staff).toMatchObject({ id: vet2.id, mustChangePassword: true });
    expect((await me.GET(request('/api/auth/me', { cookie: oldSession }), undefined)).status).toBe(401);
    expect((await signInWith('vet2@fernhollow.example', DEMO_PASSWORD)).status).toBe(401);
    const signedIn = await signInWith('vet2@fernhollow.example', 'temporary-pass-2026');
    expect(signedIn.status).toBe(200);
    expect((await body(signedIn)).user.mustChangePassword).toBe(true);
    const cookie = (signedIn.headers.get('set-cookie') ?? '').split(';')[0];

    // Until the new password is chosen, every other API answers 403 with its own code (RFC 9110 §15.5.4:
    // understood, refused); reading one's own session stays open so the page can say why.
    const waiting = await waitingRoute.GET(request('/api/readings/waiting', { cookie }), undefined);
    expect(waiting.status).toBe(403);
    expect((await body(waiting)).error.code).toBe('password_change_required');
    const register = await patientsRoute.POST(
      request('/api/patients', { cookie, body: { name: 'Pip', species: 'dog', recordNumber: 'TMP-1' } }),
      undefined,
    );
    expect(register.status).toBe(403);
    expect((await body(register)).error.code).toBe('password_change_required');
    const own = await me.GET(request('/api/auth/me', { cookie }), undefined);
    expect(own.status).toBe(200);
    expect((await body(own)).user.mustChangePassword).toBe(true);

    const same = await ownPassword.POST(
      request('/api/auth/password', { cookie, body: { currentPassword: 'temporary-pass-2026', newPassword: 'temporary-pass-2026', confirmPassword: 'temporary-pass-2026' } }),
      undefined,
    );
    expect(same.status).toBe(400);
    expect((await body(same)).error.issues[0].path).toBe('newPassword');
    const wrong = await ownPassword.POST(
      request('/api/auth/password', { cookie, body: { currentPassword: 'not-it', newPassword: 'my-own-password-1', confirmPassword: 'my-own-password-1' } }),
      undefined,
    );
    expect((await body(wrong)).error.issues[0].path).toBe('currentPassword');
    const changed = await ownPassword.POST(
      request('/api/auth/password', { cookie, body: { currentPassword: 'temporary-pass-2026', newPassword: 'my-own-password-1', confirmPassword: 'my-own-password-1' } }),
      undefined,
    );
    expect(changed.status).toBe(200);
    // The same session may work once the password is its own.
    expect((await waitingRoute.GET(request('/api/readings/waiting', { cookie }), undefined)).status).toBe(200);
    expect((await signOutRoute(request('/api/auth/sign-out', { cookie, body: {} }), undefined)).status).toBe(200);
    const again = await signInWith('vet2@fernhollow.example', 'my-own-password-1');
    expect((await body(again)).user.mustChangePassword).toBe(false);

    const audit = await database.db.select().from(auditEvents).where(and(eq(auditEvents.entityType, 'staff_user'), eq(auditEvents.entityId, vet2.id)));
    const actions = audit.map((a) => a.action);
    expect(actions).toEqual(expect.arrayContaining(['staff.temporary_password_set', 'staff.password_changed']));
    // The password itself is never written to the audit trail.
    expect(JSON.stringify(audit)).not.toMatch(/temporary-pass-2026|my-own-password-1/);
  });

  it('are for administrators, and follow the password rules (400 on password)', async () => {
    const tech = await staffByEmail(database.db, 'tech@fernhollow.example');
    const vet = await signIn('vet@fernhollow.example');
    expect((await passwordRoute.POST(request('/api/admin/staff/x/password', { cookie: vet, body: { password: 'long-enough-pass' } }), params({ userId: tech.id }))).status).toBe(403);
    const short = await passwordRoute.POST(request('/api/admin/staff/x/password', { cookie: admin, body: { password: 'short' } }), params({ userId: tech.id }));
    expect(short.status).toBe(400);
    expect((await body(short)).error.issues[0].path).toBe('password');
  });
});

describe('editing and retiring instruments', () => {
  const crp = async () => (await database.db.select().from(instruments).where(eq(instruments.code, 'crp-reader')))[0];
  const asInput = (i: Awaited<ReturnType<typeof crp>>) => ({
    code: i.code,
    name: i.name,
    analytes: i.analytes,
    dialect: i.dialect,
    ...(i.serialNumber ? { serialNumber: i.serialNumber } : {}),
    ...(i.bridgeId ? { bridgeId: i.bridgeId } : {}),
    ...(i.connection ? { connection: i.connection } : {}),
  });
  const configCodes = async () =>
    (await body(await bridgeConfig.GET(request('/api/bridge/config', { token }), undefined))).instruments.map((i: { code: string }) => i.code);

  it('saves an edit with an audit event naming what changed; the code cannot change', async () => {
    const before = await crp();
    const response = await instrumentRoute.PATCH(
      request('/api/admin/instruments/x', { method: 'PATCH', cookie: admin, body: { ...asInput(before), name: 'CRP reader (front bench)', serialNumber: 'SN-0042' } }),
      params({ instrumentId: before.id }),
    );
    expect(response.status).toBe(200);
    expect((await body(response)).instrument).toMatchObject({ name: 'CRP reader (front bench)', serialNumber: 'SN-0042', code: 'crp-reader' });
    const [event] = await database.db.select().from(auditEvents).where(and(eq(auditEvents.action, 'instrument.updated'), eq(auditEvents.entityId, before.id)));
    // The name and serial number changed; the tests it runs did not. (The connection may be listed once,
    // when the form's defaults fill in settings the stored value left implicit, e.g. TCP mode "connect".)
    expect(event.details.changed).toEqual(expect.arrayContaining(['name', 'serialNumber']));
    expect(event.details.changed).not.toContain('analytes');
    expect(event.details.before).toMatchObject({ name: 'CRP reader (bench 1)' });
    const recode = await instrumentRoute.PATCH(
      request('/api/admin/instruments/x', { method: 'PATCH', cookie: admin, body: { ...asInput(before), code: 'crp-renamed' } }),
      params({ instrumentId: before.id }),
    );
    expect(recode.status).toBe(400);
    expect((await body(recode)).error.issues[0].path).toBe('code');
  });

  // Issue 9: the number format (decimal point or comma, lib/validation/numbers.ts) can be changed after the
  // instrument was added, and the bridge reads the next numbers with it (its config carries read.decimalMark;
  // bridge/config-sync.ts turns that into the pipeline's setting, and a changed setting restarts the pipeline).
  it('changes the number format of an instrument, and the bridge config carries it', async () => {
    const before = await crp();
    const config = async () => serverConfigSchema.parse(await body(await bridgeConfig.GET(request('/api/bridge/config', { token }), undefined)));
    const first = await config();
    const response = await instrumentRoute.PATCH(
      request('/api/admin/instruments/x', { method: 'PATCH', cookie: admin, body: { ...asInput(before), readSettings: { decimalMark: 'comma' } } }),
      params({ instrumentId: before.id }),
    );
    expect(response.status).toBe(200);
    expect((await body(response)).instrument.readSettings).toEqual({ decimalMark: 'comma' });
    const after = await config();
    expect(after.version).not.toBe(first.version);
    expect(after.instruments.find((i) => i.code === 'crp-reader')?.read).toEqual({ decimalMark: 'comma' });
    expect((await instrumentsOf(after)).instruments.find((i) => i.code === 'crp-reader')?.decimalMark).toBe('comma');
    const events = await database.db.select().from(auditEvents).where(and(eq(auditEvents.action, 'instrument.updated'), eq(auditEvents.entityId, before.id)));
    expect(events.at(-1)?.details.changed).toEqual(expect.arrayContaining(['readSettings']));
    expect(events.at(-1)?.details.before).toMatchObject({ readSettings: {} });
    const wrong = await instrumentRoute.PATCH(
      request('/api/admin/instruments/x', { method: 'PATCH', cookie: admin, body: { ...asInput(before), readSettings: { decimalMark: 'dot' } } }),
      params({ instrumentId: before.id }),
    );
    expect(wrong.status).toBe(400);
    expect((await body(wrong)).error.issues[0].path).toBe('readSettings.decimalMark');
    // Back to a decimal point for the tests after this one.
    await instrumentRoute.PATCH(request('/api/admin/instruments/x', { method: 'PATCH', cookie: admin, body: { ...asInput(before), readSettings: { decimalMark: 'point' } } }), params({ instrumentId: before.id }));
  });

  it('retiring takes it out of the bridge’s configuration; its readings, old and late, keep it', async () => {
    const i = await crp();
    const earlier = await ingestOne(token, 'retire-before-0001');
    expect(await configCodes()).toContain('crp-reader');
    const retire = await serviceRoute.POST(request('/api/admin/instruments/x/service', { cookie: admin, body: { active: false, reason: 'Replaced by the new reader' } }), params({ instrumentId: i.id }));
    expect(retire.status).toBe(200);
    expect((await body(retire)).instrument.active).toBe(false);
    expect(await configCodes()).not.toContain('crp-reader');
    // A record still in the bridge's spool arrives after retirement: stored, and still under the instrument.
    const late = await ingestOne(token, 'retire-after-0001');
    for (const readingId of [earlier, late]) {
      const { reading } = await body(await readingRoute.GET(request(`/api/readings/${readingId}`, { cookie: admin }), params({ readingId })));
      expect(reading.instrumentId).toBe(i.id);
    }
    expect((await serviceRoute.POST(request('/api/admin/instruments/x/service', { cookie: admin, body: { active: false, reason: 'Again' } }), params({ instrumentId: i.id }))).status).toBe(409);
    const back = await serviceRoute.POST(request('/api/admin/instruments/x/service', { cookie: admin, body: { active: true, reason: 'Loan unit returned' } }), params({ instrumentId: i.id }));
    expect(back.status).toBe(200);
    expect(await configCodes()).toContain('crp-reader');
    const actions = (await database.db.select().from(auditEvents).where(eq(auditEvents.entityId, i.id))).map((a) => a.action);
    expect(actions).toEqual(expect.arrayContaining(['instrument.retired', 'instrument.returned_to_service']));
  });

  it('needs a reason and an administrator', async () => {
    const i = await crp();
    const noReason = await serviceRoute.POST(request('/api/admin/instruments/x/service', { cookie: admin, body: { active: false } }), params({ instrumentId: i.id }));
    expect((await body(noReason)).error.issues[0].path).toBe('reason');
    const tech = await signIn('tech@fernhollow.example');
    expect((await serviceRoute.POST(request('/api/admin/instruments/x/service', { cookie: tech, body: { active: false, reason: 'Mine now' } }), params({ instrumentId: i.id }))).status).toBe(403);
    expect((await instrumentRoute.PATCH(request('/api/admin/instruments/x', { method: 'PATCH', cookie: tech, body: asInput(i) }), params({ instrumentId: i.id }))).status).toBe(403);
  });
});
