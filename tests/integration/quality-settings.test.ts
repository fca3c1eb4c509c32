// The clinic's lab-quality settings (QC sample-ID pattern, bridge offline timeout, kit expiry warning)
// through the real handler, and the Admin form's resolver on the same zod schema: a pattern the
// linear-time engine cannot run is refused on its field with the reason, by both, before anything is stored.
// RE2 syntax (github.com/google/re2/wiki/Syntax, from memory): "\1 backreference NOT SUPPORTED",
// "(?=re) … NOT SUPPORTED" (lookahead), "(?<=re) … NOT SUPPORTED" (lookbehind).
import { zodResolver } from '@hookform/resolvers/zod';
import { and, desc, eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { GET, PATCH } from '@/app/api/quality/settings/route';
import type { Database } from '@/db/client';
import { auditEvents, readings } from '@/db/schema';
import { qualitySettingsSchema } from '@/lib/validation/quality';
import { seededDatabase } from '../helpers/db';
import { request, signIn } from '../helpers/http';
import { body, ingestOne } from './support';

let database: Database;
let token: string;
let clinicId: string;
let admin: string;
let tech: string;

beforeAll(async () => {
  ({ database, bridgeToken: token, clinicId } = await seededDatabase());
  [admin, tech] = await Promise.all([signIn('admin@fernhollow.example'), signIn('tech@fernhollow.example')]);
});

const patch = (payload: unknown, cookie = admin) => PATCH(request('/api/quality/settings', { method: 'PATCH', cookie, body: payload }), undefined);
const current = async () => (await body(await GET(request('/api/quality/settings', { cookie: admin }), undefined))).settings;

/** What react-hook-form would show: the resolver's error per field. */
async function formErrors(values: Record<string, unknown>) {
  const resolve = zodResolver(qualitySettingsSchema);
  const result = await resolve(values as never, undefined, { fields: {}, shouldUseNativeValidation: false });
  return Object.fromEntries(Object.entries(result.errors).map(([k, v]) => [k, (v as { message?: string }).message]));
}

describe('lab-quality settings', () => {
  it('start from the defaults: ^QC, 3 minutes, 30 days', async () => {
    expect(await current()).toEqual({ qcSampleIdPattern: '^QC', bridgeOfflineMinutes: 3, kitWarnDays: 30 });
  });

  it('refuses a backreference and a lookahead on the pattern field with the reason, in the form and on the server', async () => {
    for (const [pattern, reason] of [
      ['^(QC)-\\1', /backreference/],
      ['^(?=QC)', /lookahead and lookbehind/],
      ['^(?<!X)QC', /lookahead and lookbehind/],
    ] as const) {
      const form = await formErrors({ qcSampleIdPattern: pattern, bridgeOfflineMinutes: 3, kitWarnDays: 30 });
      expect(Object.keys(form)).toEqual(['qcSampleIdPattern']);
      expect(form.qcSampleIdPattern).toMatch(reason);
      const response = await patch({ qcSampleIdPattern: pattern });
      expect(response.status).toBe(400);
      const issues = (await body(response)).error.issues;
      expect(issues).toEqual([{ path: 'qcSampleIdPattern', message: form.qcSampleIdPattern }]);
    }
    expect((await current()).qcSampleIdPattern).toBe('^QC');
  });

  it('refuses numbers out of range or empty on their own fields', async () => {
    // An emptied number input reaches the resolver as NaN (react-hook-form valueAsNumber).
    const form = await formErrors({ qcSampleIdPattern: '^QC', bridgeOfflineMinutes: 0, kitWarnDays: Number.NaN });
    expect(form).toEqual({ bridgeOfflineMinutes: 'At least 1 minute.', kitWarnDays: 'Give the days as a number.' });
    const response = await patch({ bridgeOfflineMinutes: 2000, kitWarnDays: 2.5 });
    expect(response.status).toBe(400);
    expect((await body(response)).error.issues.map((i: { path: string }) => i.path).sort()).toEqual(['bridgeOfflineMinutes', 'kitWarnDays']);
  });

  it('only an administrator changes them (a technician gets 403)', async () => {
    expect((await patch({ kitWarnDays: 10 }, tech)).status).toBe(403);
  });

  it('saves all three, audited with before and after, and the new pattern decides QC at ingest', async () => {
    const response = await patch({ qcSampleIdPattern: '^(QC|CTRL)[-_ ]?L[0-9]$', bridgeOfflineMinutes: 10, kitWarnDays: 45 });
    expect(response.status).toBe(200);
    expect(await current()).toEqual({ qcSampleIdPattern: '^(QC|CTRL)[-_ ]?L[0-9]$', bridgeOfflineMinutes: 10, kitWarnDays: 45 });
    const [event] = await database.db
      .select()
      .from(auditEvents)
      .where(and(eq(auditEvents.clinicId, clinicId), eq(auditEvents.action, 'clinic.quality-settings-changed')))
      .orderBy(desc(auditEvents.at))
      .limit(1);
    expect(event.details).toEqual({
      before: { qcSampleIdPattern: '^QC', bridgeOfflineMinutes: 3, kitWarnDays: 30 },
      after: { qcSampleIdPattern: '^(QC|CTRL)[-_ ]?L[0-9]$', bridgeOfflineMinutes: 10, kitWarnDays: 45 },
    });
    // Compared without regard to capitals, as the field's hint says.
    const control = await ingestOne(token, 'settings-qc-000001', { sampleId: 'ctrl-l2' });
    const patient = await ingestOne(token, 'settings-qc-000002', { sampleId: 'QC-SPARE' });
    const rows = await database.db.select({ id: readings.id, status: readings.status }).from(readings).where(eq(readings.clinicId, clinicId));
    expect(rows.find((r) => r.id === control)?.status).toBe('control');
    expect(rows.find((r) => r.id === patient)?.status).toBe('unassigned');
  });
});
