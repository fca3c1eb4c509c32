// Regression: lib/validation/api.ts signInSchema / setupSchema / newStaffSchema use `z.email(...).trim().toLowerCase()`.
// In zod 4 the e-mail format check of z.email() runs before the .trim() overwrite, so a pasted or auto-filled
// address with a leading/trailing space fails with "Enter a valid e-mail address." (400) — the .trim() never helps.
// Expected: trimmed first, then checked, e.g. `z.string().trim().toLowerCase().pipe(z.email(...))`.
import { beforeAll, describe, expect, it } from 'vitest';
import './support';
import { POST as signInRoute } from '@/app/api/auth/sign-in/route';
import { DEMO_PASSWORD } from '@/db/seed';
import { newStaffSchema, setupSchema, signInSchema } from '@/lib/validation/api';
import { seededDatabase } from '../helpers/db';
import { request } from '../helpers/http';

beforeAll(async () => {
  await seededDatabase();
});

describe('e-mail addresses with surrounding spaces', () => {
  it('sign-in accepts " tech@fernhollow.example "', async () => {
    const response = await signInRoute(request('/api/auth/sign-in', { body: { email: ' tech@fernhollow.example ', password: DEMO_PASSWORD } }), undefined);
    expect(response.status).toBe(200);
  });

  it('every e-mail schema trims before it checks', () => {
    expect(signInSchema.parse({ email: ' A@B.example ', password: 'x' }).email).toBe('a@b.example');
    expect(setupSchema.parse({ clinicName: 'Alder Brook', displayName: 'Runa Velt', email: ' A@B.example', password: 'long-enough-pass' }).email).toBe('a@b.example');
    expect(newStaffSchema.parse({ displayName: 'Runa Velt', email: 'A@B.example ', role: 'technician', password: 'long-enough-pass' }).email).toBe('a@b.example');
  });
});
