// A printout profile that recognises QC slips from a reader that prints no sample ID: the server's
// preview, the bridge's engine run on the profile it gets from GET /api/bridge/config, and ingest agree.
// The slip's results are control runs (never Intake, never a patient: assign is 409 control_run) and go
// to the control material of the level printed. Keeping QC off patients: common practice, no source.
// Invented slips.
import { eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { GET as bridgeConfig } from '@/app/api/bridge/config/route';
import { GET as listInstruments, POST as addInstrument } from '@/app/api/admin/instruments/route';
import { POST as createProfile } from '@/app/api/admin/profiles/route';
import { POST as preview } from '@/app/api/admin/profiles/preview/route';
import { POST as materialRoute } from '@/app/api/quality/materials/route';
import { POST as assignRoute } from '@/app/api/readings/[readingId]/assign/route';
import { createParsingStages } from '@/bridge/parse-stage';
import { loadProfile, profileDialect } from '@/bridge/dialects/profile';
import { runThrough } from '@/bridge/testing/streams';
import type { Database } from '@/db/client';
import { auditEvents, readings } from '@/db/schema';
import type { ParserOutput } from '@/lib/validation/readings';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';
import { body, ingest, patientByRecord } from './support';

const CODE = 'crp-slip-reader';
const definition = {
  analyzer: 'Invented single-test CRP reader (no sample IDs)',
  record: { formFeed: true },
  fields: [
    { label: 'Result', pattern: '^CRP\\s+(?<value>[<>]?[\\d.]+)\\s+(?<unit>\\S+)', required: true },
    { label: 'Time', pattern: '^(?<date>\\d{4}-\\d\\d-\\d\\d) (?<time>\\d\\d:\\d\\d)$' },
  ],
  analyte: 'cCRP',
  control: { pattern: '^QC\\s+LEVEL\\s+(?<level>\\S+)' },
};
const PATIENT_SLIP = 'CRP  12.4 mg/L\n2026-12-01 09:15\n\f';
const QC_SLIP = 'QC LEVEL 2\nCRP  61.0 mg/L\n2026-12-01 09:20\n\f';

let database: Database;
let token: string;
let clinicId: string;
let admin: string;
let tech: string;
let levels: Record<string, string>;

beforeAll(async () => {
  ({ database, bridgeToken: token, clinicId } = await seededDatabase());
  [admin, tech] = await Promise.all([signIn('admin@fernhollow.example'), signIn('tech@fernhollow.example')]);
});

describe('a profile that marks control slips', () => {
  let bridgeOutputs: ParserOutput[];

  it('is saved, handed to the bridge, and the bridge reads the slips as the preview does', async () => {
    const created = await createProfile(request('/api/admin/profiles', { cookie: admin, body: { name: 'CRP slips', definition } }), undefined);
    expect(created.status).toBe(201);
    const { profile } = await body(created);
    const known = (await body(await listInstruments(request('/api/admin/instruments', { cookie: admin }), undefined))).instruments;
    const bridgeId = known.find((i: { code: string }) => i.code === 'crp-reader').bridgeId;
    const added = await addInstrument(
      request('/api/admin/instruments', {
        cookie: admin,
        body: { code: CODE, name: 'CRP slip reader', analytes: ['cCRP'], dialect: 'profile', profileId: profile.key, bridgeId, connection: { kind: 'tcp', host: '127.0.0.1', port: 4011 } },
      }),
      undefined,
    );
    expect(added.status).toBe(201);
    const instrumentId = (await body(added)).instrument.id;
    levels = {};
    for (const [level, mean] of [['1', 12], ['2', 62]] as const) {
      const material = await materialRoute(
        request('/api/quality/materials', {
          cookie: tech,
          body: { analyte: 'cCRP', instrumentId, name: `CRP control ${level}`, lotNumber: 'SLIP-C', level, unit: 'mg/L', targetMean: mean, targetSd: 3 },
        }),
        undefined,
      );
      expect(material.status).toBe(201);
      levels[level] = (await body(material)).material.id;
    }

    const sample = PATIENT_SLIP + QC_SLIP;
    const previewed = await preview(request('/api/admin/profiles/preview', { cookie: admin, body: { definition, sample } }), undefined);
    expect(previewed.status).toBe(200);
    const items = (await body(previewed)).items;
    expect(items.map((i: { control: unknown }) => i.control)).toEqual([null, { level: '2' }]);

    const config = (await body(await bridgeConfig(request('/api/bridge/config', { token }), undefined))).instruments.find((i: { code: string }) => i.code === CODE);
    const loaded = await loadProfile(config.profile.definition);
    if (!loaded.ok) throw new Error(loaded.message);
    bridgeOutputs = await runThrough<ParserOutput>([Buffer.from(sample)], createParsingStages(profileDialect(loaded.definition), { idle: false }));
    expect(bridgeOutputs.map((o) => (o.kind === 'reading' ? [o.value, o.specimenRole ?? null, o.controlLevel ?? null] : o.reason))).toEqual([
      [12.4, null, null],
      [61, 'control', '2'],
    ]);
    expect(bridgeOutputs.map((o) => o.kind === 'reading' && o.value)).toEqual(items.map((i: { reading: { value: number } }) => i.reading.value));
  });

  it('at ingest the QC slip is a control run on the level-2 material, never in Intake, never on a patient', async () => {
    const records = bridgeOutputs.map((payload, i) => ({ key: `slip-control-${String(i).padStart(6, '0')}`, instrument: CODE, receivedAt: new Date().toISOString(), payload }));
    const response = await ingest(token, records);
    expect(response.status).toBe(200);
    const [patientId, controlId] = (await body(response)).results.map((r: { id: string }) => r.id);
    const rows = await database.db.select().from(readings).where(eq(readings.clinicId, clinicId));
    const patientRow = rows.find((r) => r.id === patientId)!;
    const controlRow = rows.find((r) => r.id === controlId)!;
    expect(patientRow.status).toBe('unassigned');
    expect(controlRow).toMatchObject({ status: 'control', controlMaterialId: levels['2'] });
    const marked = (await database.db.select().from(auditEvents).where(eq(auditEvents.action, 'reading.marked-control'))).find((e) => e.entityId === controlId);
    expect(marked?.details).toEqual({ how: 'analyzer', controlMaterialId: levels['2'], level: '2' });

    const patient = await patientByRecord(database.db, clinicId, 'FH-1001');
    const assign = await assignRoute(request(`/api/readings/${controlId}/assign`, { cookie: tech, body: { patientId: patient.id } }), params({ readingId: controlId }));
    expect(assign.status).toBe(409);
    expect((await body(assign)).error.code).toBe('control_run');
  });

  it('a printed level with no single material of that level is QC without a material (a person names it), not a guess', async () => {
    const payload = { ...bridgeOutputs[1], controlLevel: '3', raw: QC_SLIP.replace('LEVEL 2', 'LEVEL 3') };
    const response = await ingest(token, [{ key: 'slip-control-level3-0001', instrument: CODE, receivedAt: new Date().toISOString(), payload }]);
    const id = (await body(response)).results[0].id;
    const [row] = await database.db.select().from(readings).where(eq(readings.id, id));
    expect(row).toMatchObject({ status: 'control', controlMaterialId: null });
  });
});
