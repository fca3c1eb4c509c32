import { eq } from 'drizzle-orm';
import Papa from 'papaparse';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, ingestOne, patientByRecord } from './support';
import * as assign from '@/app/api/readings/[readingId]/assign/route';
import * as exportRoute from '@/app/api/results/export/route';
import type { Database } from '@/db/client';
import { auditEvents, patients } from '@/db/schema';
import { startOfDayIn } from '@/lib/reports/export';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

// Results export as CSV, read back with papaparse. Demo data: Biscuit's invented CRP series (seed).
// Formula neutralisation per the OWASP "CSV Injection" guidance (leading = + - @ tab CR get a ').

let database: Database;
let clinicId: string;
let tech: string;
let biscuit: string;
let bridgeToken: string;

beforeAll(async () => {
  ({ database, clinicId, bridgeToken } = await seededDatabase());
  tech = await signIn('tech@fernhollow.example');
  biscuit = (await patientByRecord(database.db, clinicId, 'FH-1001')).id;
});

const get = (query: string) => exportRoute.GET(request(`/api/results/export?${query}`, { cookie: tech }), undefined);
const parse = async (response: Response) => {
  const parsed = Papa.parse<Record<string, string>>((await response.text()).trimEnd(), { header: true, newline: '\r\n' });
  expect(parsed.errors).toEqual([]);
  return parsed.data;
};

describe('results export', () => {
  it('London midnight: 00:00 BST is 23:00 UTC the day before, 00:00 GMT is 00:00 UTC (IANA tz via Intl)', () => {
    expect(startOfDayIn('2026-07-01', 'Europe/London').toISOString()).toBe('2026-06-30T23:00:00.000Z');
    expect(startOfDayIn('2026-01-15', 'Europe/London').toISOString()).toBe('2026-01-15T00:00:00.000Z');
  });

  it('one patient: every result on the record, oldest first, with unit, flag and interval; audited', async () => {
    const response = await get(`patientId=${biscuit}`);
    expect(response.status).toBe(200);
    expect(response.headers.get('content-type')).toBe('text/csv; charset=utf-8');
    const rows = await parse(response);
    expect(rows).toHaveLength(5);
    expect(rows.map((r) => `${r.comparator}${r.value}`)).toEqual(['8.1', '96.4', '61', '24.8', '<5']);
    expect(rows[1]).toMatchObject({ record_number: 'FH-1001', patient: 'Biscuit', species: 'dog', test: 'cCRP', unit: 'mg/L', flag: 'H', interval_high: '10' });
    expect(rows[1].reviewed_by).toBe('Dr. Ilse Corvan');
    expect(rows[4].reviewed_by).toBe('');
    const audit = await database.db.select().from(auditEvents).where(eq(auditEvents.action, 'results.exported'));
    expect(audit.at(-1)?.details).toMatchObject({ rows: 5, format: 'csv' });
  });

  it('coded and text results go out as sent (code, display, system; text; notes), never as an empty value', async () => {
    // HL7 v2 OBX-5 as CE (code^text^coding system) and as ST, with an NTE comment and OBX-8 flag A (from memory).
    const juniper = (await patientByRecord(database.db, clinicId, 'FH-1002')).id;
    for (const [key, payload] of [
      ['export-coded-1', { analyte: 'FELV', value: null, unit: null, code: { system: 'L', code: '1', display: 'Positive' }, flags: ['A'], notes: ['Confirm with a second test'], raw: 'OBX|1|CE|FELV||1^Positive^L||||A\r' }],
      ['export-text-1', { analyte: 'UMIC', value: null, unit: null, text: '=Struvite crystals', raw: 'OBX|1|ST|UMIC||=Struvite crystals\r' }],
    ] as const) {
      const readingId = await ingestOne(bridgeToken, key, payload);
      expect((await assign.POST(request('/api/readings/x/assign', { cookie: tech, body: { patientId: juniper } }), params({ readingId }))).status).toBe(200);
    }
    const rows = await parse(await get(`patientId=${juniper}`));
    expect(rows.find((r) => r.test === 'FELV')).toMatchObject({ value: '', result_code: '1', result_display: 'Positive', result_code_system: 'L', result_text: '', flag: 'A', notes: 'Confirm with a second test' });
    // A text result is a text cell like any other: a leading = is neutralised (OWASP CSV injection guidance).
    expect(rows.find((r) => r.test === 'UMIC')).toMatchObject({ value: '', result_code: '', result_text: "'=Struvite crystals", flag: '' });
  });

  it('a date range counts clinic days inclusively', async () => {
    const all = await parse(await get(`patientId=${biscuit}`));
    const day = (iso: string) => new Intl.DateTimeFormat('en-CA', { timeZone: 'Europe/London' }).format(new Date(iso));
    const second = day(all[1].measured_at);
    const fourth = day(all[3].measured_at);
    const ranged = await parse(await get(`from=${second}&to=${fourth}`));
    expect(ranged.map((r) => r.value)).toEqual(expect.arrayContaining(['96.4', '61', '24.8']));
    expect(ranged.map((r) => r.value)).not.toContain('8.1');
  });

  it('neutralises a formula in a text cell (a name as a practice system might send it)', async () => {
    await database.db.update(patients).set({ name: '=HYPERLINK("http://evil.example","Biscuit")' }).where(eq(patients.id, biscuit));
    try {
      const text = await (await get(`patientId=${biscuit}`)).text();
      expect(text).toContain(`"'=HYPERLINK(""http://evil.example"",""Biscuit"")"`);
      const rows = Papa.parse<Record<string, string>>(text.trimEnd(), { header: true, newline: '\r\n' }).data;
      expect(rows.every((r) => r.patient.startsWith("'="))).toBe(true);
    } finally {
      await database.db.update(patients).set({ name: 'Biscuit' }).where(eq(patients.id, biscuit));
    }
  });

  it('asks for a patient or a full range, in order (400)', async () => {
    expect((await get('')).status).toBe(400);
    expect((await get('from=2026-01-01')).status).toBe(400);
    const reversed = await get('from=2026-02-01&to=2026-01-01');
    expect(reversed.status).toBe(400);
    expect((await body(reversed)).error.message).toContain('ends before it starts');
    expect((await get('patientId=00000000-0000-4000-8000-000000000000')).status).toBe(404);
  });
});
