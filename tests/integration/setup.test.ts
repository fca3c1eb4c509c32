import { eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body } from './support';
import { GET as me } from '@/app/api/auth/me/route';
import { GET as setupGet, POST as setupPost } from '@/app/api/setup/route';
import type { Database } from '@/db/client';
import { auditEvents, clinics, staffUsers } from '@/db/schema';
import { freshDatabase } from '../helpers/db';
import { request } from '../helpers/http';

let database: Database;
beforeAll(async () => {
  database = await freshDatabase();
});

const input = {
  clinicName: 'Alder Brook Animal Clinic',
  timeZone: 'Europe/Dublin',
  displayName: 'Runa Velt',
  email: 'Runa.Velt@AlderBrook.example',
  password: 'a-long-first-password',
};
const post = (value: unknown) => setupPost(request('/api/setup', { body: value }), undefined);
const needsSetup = async () => (await body(await setupGet(request('/api/setup'), undefined))).needsSetup;

// These run in order: the database starts empty and the clinic is created part-way.
describe('first-run setup', () => {
  it('an empty database needs setup', async () => {
    expect(await needsSetup()).toBe(true);
  });

  it('a weak password is 400 with an issue on password, and nothing is created', async () => {
    const response = await post({ ...input, password: 'short' });
    expect(response.status).toBe(400);
    const json = await body(response);
    expect(json.error.code).toBe('invalid_request');
    expect(json.error.issues.map((i: { path: string }) => i.path)).toEqual(['password']);
    expect(await database.db.select().from(clinics)).toEqual([]);
    expect(await needsSetup()).toBe(true);
  });

  it('missing fields are 400 naming each of them', async () => {
    const json = await body(await post({}));
    expect(json.error.issues.map((i: { path: string }) => i.path).sort()).toEqual(['clinicName', 'displayName', 'email', 'password']);
  });

  let cookie: string;
  it('creates the clinic and its administrator and signs them in (201 + session cookie)', async () => {
    const response = await post(input);
    expect(response.status).toBe(201); // RFC 9110 §15.3.2 Created
    const json = await body(response);
    expect(json.clinic).toMatchObject({ name: 'Alder Brook Animal Clinic' });

    const setCookie = response.headers.get('set-cookie') ?? '';
    expect(setCookie).toMatch(/^benchwire_session=[^;]+/);
    expect(setCookie).toMatch(/;\s*HttpOnly/i);
    expect(setCookie).toMatch(/;\s*SameSite=Lax/i);
    expect(setCookie).toMatch(/;\s*Path=\//i);
    cookie = setCookie.split(';')[0];

    const [clinic] = await database.db.select().from(clinics);
    expect(clinic).toMatchObject({ id: json.clinic.id, name: input.clinicName, timeZone: 'Europe/Dublin' });
    const [admin] = await database.db.select().from(staffUsers);
    expect(admin).toMatchObject({ clinicId: clinic.id, email: 'runa.velt@alderbrook.example', displayName: 'Runa Velt', role: 'admin', active: true });
    expect(admin.passwordHash).toMatch(/^scrypt\$/);
    expect(admin.passwordHash).not.toContain(input.password);
    const [event] = await database.db.select().from(auditEvents).where(eq(auditEvents.action, 'clinic.created'));
    expect(event).toMatchObject({ clinicId: clinic.id, actorUserId: admin.id, entityId: clinic.id });
  });

  it('the cookie from setup is a working administrator session', async () => {
    const response = await me(request('/api/auth/me', { cookie }), undefined);
    expect(response.status).toBe(200);
    expect((await body(response)).user).toMatchObject({ role: 'admin', email: 'runa.velt@alderbrook.example' });
  });

  it('then no longer needs setup, and a second setup is 409 already_set_up', async () => {
    expect(await needsSetup()).toBe(false);
    const again = await post({ ...input, clinicName: 'Second Clinic', email: 'someone.else@alderbrook.example' });
    expect(again.status).toBe(409); // RFC 9110 §15.5.10
    expect((await body(again)).error.code).toBe('already_set_up');
    expect(again.headers.get('set-cookie')).toBeNull();
    expect(await database.db.select().from(clinics)).toHaveLength(1);
    expect(await database.db.select().from(staffUsers)).toHaveLength(1);
  });
});
