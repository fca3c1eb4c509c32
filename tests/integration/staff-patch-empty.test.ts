// Regression: lib/validation/api.ts updateStaffSchema has only optional fields, so `{}` (or `{"displayName":"x"}`, whose
// unknown key is stripped) passes; lib/staff.ts updateStaff then calls drizzle `.set({})`, which throws
// "No values to set", and the route answers 500 "internal".
// Expected: 400 invalid_request (nothing to change) — RFC 9110 §15.5.1 — or a 200 no-op; never 500.
import { beforeAll, describe, expect, it } from 'vitest';
import { body, staffByEmail } from './support';
import { PATCH as updateStaff } from '@/app/api/admin/staff/[userId]/route';
import type { Database } from '@/db/client';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

let database: Database;
let cookie: string;
beforeAll(async () => {
  ({ database } = await seededDatabase());
  cookie = await signIn('admin@fernhollow.example');
});

describe('PATCH /api/admin/staff/[userId] with nothing to change', () => {
  it.each([[{}], [{ displayName: 'Renamed' }]])('%j is 400 invalid_request, not 500', async (change) => {
    const tech = await staffByEmail(database.db, 'tech@fernhollow.example');
    const response = await updateStaff(request('/api/admin/staff/x', { method: 'PATCH', cookie, body: change }), params({ userId: tech.id }));
    expect(response.status).toBe(400);
    expect((await body(response)).error.code).toBe('invalid_request');
  });
});
