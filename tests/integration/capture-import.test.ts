import { createHash, randomUUID } from 'node:crypto';
import { and, eq, isNotNull } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, ingest, patientByRecord, staffByEmail } from './support';
import * as importRoute from '@/app/api/admin/capture-imports/route';
import * as adminClinical from '@/app/api/admin/clinical/route';
import * as orders from '@/app/api/orders/route';
import { POST as addInstrument } from '@/app/api/admin/instruments/route';
import { POST as createProfile } from '@/app/api/admin/profiles/route';
import { POST as reviseProfile } from '@/app/api/admin/profiles/[profileKey]/versions/route';
import * as waiting from '@/app/api/readings/waiting/route';
import { POST as transcribe } from '@/app/api/captures/[captureId]/transcribe/route';
import { GET as listCaptures } from '@/app/api/captures/route';
import { getDialect } from '@/bridge/dialects';
import { C, testFrame } from '@/bridge/testing/astm';
import type { Database } from '@/db/client';
import { auditEvents, captureImports, instruments, readings, unparsedCaptures } from '@/db/schema';
import { CAPTURE_IMPORT_LIMITS, readCaptureBytes } from '@/lib/import/captures';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

// Capture-file import: raw bytes as recorded from an analyzer's line, read for one instrument by the
// bridge's own stages, previewed, then stored in one audited transaction, without duplicating what the
// bridge already sent or what an earlier import stored.
//
// The capture is written from the standards' text: ASTM E1381 (LIS1-A) low-level framing, ENQ to open a
// session, each frame <STX> FN text <CR> <ETX> C1 C2 <CR> <LF> with FN counting 1..7, 0 and the checksum the
// sum of the bytes from FN through ETX modulo 256 as two upper-case hex digits (bridge/testing/astm.ts
// computes it byte by byte, apart from the bridge's framer), EOT to close; ASTM E1394 (LIS2-A) records
// H, P, O, R, L with "|" fields and "^" components, R.3 the universal test ID (^^^code), R.4 the value,
// R.5 the units, R.13 the completion time (field positions from memory).

let database: Database;
let clinicId: string;
let bridgeToken: string;
let admin: string;
let chemistry: { id: string; code: string };
let crpReader: { id: string; code: string };

beforeAll(async () => {
  ({ database, clinicId, bridgeToken } = await seededDatabase());
  admin = await signIn('admin@fernhollow.example');
  const rows = await database.db.select().from(instruments).where(eq(instruments.clinicId, clinicId));
  chemistry = rows.find((i) => i.dialect === 'astm-e1394')!;
  crpReader = rows.find((i) => i.dialect === 'plain-printout')!;
});

/** One E1381 session: ENQ, one frame per record numbered 1..7, 0, …, EOT. */
function session(records: string[]): Buffer {
  return Buffer.concat([Buffer.from([C.ENQ]), ...records.map((r, i) => testFrame((i + 1) % 8, `${r}\r`)), Buffer.from([C.EOT])]);
}
const message = (sample: string, patient: string, results: [string, string, string][], at: string) => [
  `H|\\^&|||CHEMSIM^1^SN-7||||||||P|1|${at}`,
  `P|1||${patient}`,
  `O|1|${sample}||^^^CHEM`,
  ...results.map(([code, value, unit], i) => `R|${i + 1}|^^^${code}|${value}|${unit}||N||F||||${at}`),
  'L|1|N',
];
const FIRST = session(message('S-7001', 'PT-88', [['GLU', '5.4', 'mmol/L'], ['ALT', '41', 'U/L']], '20261201091500'));
const SECOND = session(message('S-7002', 'PT-89', [['CREA', '97', 'umol/L']], '20261201093000'));
// Line noise between sessions: bytes outside ENQ … EOT are not a message (E1381: the receiver leaves the
// neutral state only on ENQ); the bridge keeps them as an unparsed fragment.
const NOISE = Buffer.from('\x00\xff~~ line noise ~~\r\n', 'latin1');

function upload(fields: Record<string, string>, content: Uint8Array, options: { cookie?: string; name?: string } = {}) {
  const form = new FormData();
  form.set('file', new File([new Uint8Array(content)], options.name ?? 'capture.log', { type: 'application/octet-stream' }));
  for (const [k, v] of Object.entries(fields)) form.set(k, v);
  return importRoute.POST(new Request('http://benchwire.test/api/admin/capture-imports', { method: 'POST', body: form, headers: { cookie: options.cookie ?? admin } }), undefined);
}
const fromImports = async () => ({
  readings: await database.db.select().from(readings).where(and(eq(readings.clinicId, clinicId), isNotNull(readings.captureImportId))),
  captures: await database.db.select().from(unparsedCaptures).where(and(eq(unparsedCaptures.clinicId, clinicId), isNotNull(unparsedCaptures.captureImportId))),
});

describe('capture-file import', () => {
  it('preview reads the file with the instrument’s dialect (readings and unparsed fragments) and writes nothing', async () => {
    const file = Buffer.concat([FIRST, NOISE]);
    const response = await upload({ step: 'preview', instrumentId: chemistry.id }, file);
    expect(response.status).toBe(200);
    const preview = await body(response);
    expect(preview.instrument).toMatchObject({ id: chemistry.id, code: chemistry.code });
    expect(preview.readWith).toMatchObject({ dialect: 'astm-e1394' });
    // SHA-256 of the bytes as uploaded (FIPS 180-4, through node:crypto).
    expect(preview.file).toEqual({ name: 'capture.log', bytes: file.length, sha256: createHash('sha256').update(file).digest('hex') });
    expect(preview.summary).toEqual({ readingsNew: 2, readingsAlreadyStored: 0, capturesNew: 1, capturesAlreadyStored: 0 });
    const readingItems = preview.items.filter((i: { kind: string }) => i.kind === 'reading');
    // E1394 R.4/R.5 as sent, O.3 the specimen ID, P.3 the patient ID, R.13 the completion time.
    expect(readingItems).toEqual([
      expect.objectContaining({ analyte: 'GLU', value: 5.4, unit: 'mmol/L', sampleId: 'S-7001', patientRef: 'PT-88', alreadyStored: false }),
      expect.objectContaining({ analyte: 'ALT', value: 41, unit: 'U/L', sampleId: 'S-7001', alreadyStored: false }),
    ]);
    expect(preview.items.find((i: { kind: string }) => i.kind === 'unparsed')).toMatchObject({ raw: expect.stringContaining('line noise') });
    expect(preview.earlierImports).toEqual([]);
    const stored = await fromImports();
    expect(stored.readings).toHaveLength(0);
    expect(stored.captures).toHaveLength(0);
    expect(await database.db.select().from(captureImports)).toHaveLength(0);
  });

  it('confirm stores them unassigned, waiting in Intake, with the import recorded and audited; importing the file again adds nothing', async () => {
    const file = Buffer.concat([FIRST, NOISE]);
    const response = await upload({ step: 'confirm', instrumentId: chemistry.id }, file, { name: 'chem-2026-12-01.log' });
    expect(response.status).toBe(201);
    const done = await body(response);
    expect(done.summary).toEqual({ readingsNew: 2, readingsAlreadyStored: 0, capturesNew: 1, capturesAlreadyStored: 0 });

    const stored = await fromImports();
    expect(stored.readings.map((r) => r.analyte).sort()).toEqual(['ALT', 'GLU']);
    for (const r of stored.readings) {
      // No bridge sent it; nobody placed it: it waits for a person.
      expect(r).toMatchObject({ bridgeId: null, captureImportId: done.id, status: 'unassigned', patientId: null, instrumentId: chemistry.id });
    }
    expect(stored.captures).toHaveLength(1);
    expect(stored.captures[0]).toMatchObject({ bridgeId: null, captureImportId: done.id, status: 'open' });

    const [row] = await database.db.select().from(captureImports).where(eq(captureImports.id, done.id));
    const adminUser = await staffByEmail(database.db, 'admin@fernhollow.example');
    expect(row).toMatchObject({
      instrumentId: chemistry.id,
      fileName: 'chem-2026-12-01.log',
      fileBytes: file.length,
      sha256: createHash('sha256').update(file).digest('hex'),
      importedBy: adminUser.id,
      readingsAdded: 2,
      capturesAdded: 1,
    });
    const audits = await database.db.select().from(auditEvents).where(eq(auditEvents.clinicId, clinicId));
    expect(audits.filter((a) => a.action === 'capture-import.completed' && a.entityId === done.id)).toHaveLength(1);
    const imported = audits.filter((a) => a.action === 'reading.imported');
    expect(imported).toHaveLength(2);
    expect(imported.every((a) => a.actorUserId === adminUser.id && a.actorBridgeId === null)).toBe(true);

    // Intake lists them like any reading that came without a patient.
    const intake = await body(await waiting.GET(request('/api/readings/waiting', { cookie: admin }), undefined));
    const listed = JSON.stringify(intake);
    expect(listed).toContain('S-7001');

    // The same file again: the preview says it was imported before and that everything is stored already.
    const again = await body(await upload({ step: 'preview', instrumentId: chemistry.id }, file));
    expect(again.summary).toEqual({ readingsNew: 0, readingsAlreadyStored: 2, capturesNew: 0, capturesAlreadyStored: 1 });
    expect(again.earlierImports).toEqual([expect.objectContaining({ by: adminUser.displayName, readingsAdded: 2, capturesAdded: 1 })]);
    const second = await upload({ step: 'confirm', instrumentId: chemistry.id }, file);
    expect(second.status).toBe(201);
    expect((await body(second)).summary.readingsNew).toBe(0);
    const after = await fromImports();
    expect(after.readings).toHaveLength(2);
    expect(after.captures).toHaveLength(1);
  });

  it('what the bridge already sent is not added again: only the session it did not send is new', async () => {
    // The bridge read SECOND live and uploaded it with its own random keys (as bridge/spool.ts does).
    const parsed = await readCaptureBytes(getDialect('astm-e1394'), SECOND, 'point');
    expect(parsed.map((o) => o.kind)).toEqual(['reading']);
    const sent = await ingest(bridgeToken, parsed.map((payload) => ({ key: randomUUID(), instrument: chemistry.code, receivedAt: new Date().toISOString(), payload })));
    expect(sent.status).toBe(200);
    const third = session(message('S-7003', 'PT-90', [['GLU', '12.9', 'mmol/L']], '20261201100000'));
    // The capture log records what came down the line, so it also holds a frame the bridge refused: E1381
    // has the receiver NAK a frame with a wrong checksum and the sender send the same frame (same FN)
    // again (from memory). Read from the file, the message is the same as the one accepted live.
    const records = message('S-7002', 'PT-89', [['CREA', '97', 'umol/L']], '20261201093000');
    const frames = records.map((r, i) => testFrame((i + 1) % 8, `${r}\r`));
    const corrupted = testFrame(4, `${records[3]}\r`, { checksum: '00' });
    const secondAsRecorded = Buffer.concat([Buffer.from([C.ENQ]), ...frames.slice(0, 3), corrupted, ...frames.slice(3), Buffer.from([C.EOT])]);
    // The capture log holds both sessions, and the first import's too.
    const file = Buffer.concat([FIRST, secondAsRecorded, third]);
    const preview = await body(await upload({ step: 'preview', instrumentId: chemistry.id }, file));
    expect(preview.summary).toEqual({ readingsNew: 1, readingsAlreadyStored: 3, capturesNew: 0, capturesAlreadyStored: 0 });
    expect(preview.items.filter((i: { alreadyStored: boolean }) => !i.alreadyStored)).toEqual([expect.objectContaining({ sampleId: 'S-7003', analyte: 'GLU', value: 12.9 })]);
    expect((await upload({ step: 'confirm', instrumentId: chemistry.id }, file)).status).toBe(201);
    expect((await fromImports()).readings.map((r) => r.sampleId).sort()).toEqual(['S-7001', 'S-7001', 'S-7003']);
  });

  it('a second identical slip in a file is a second result, not a duplicate (counted copy by copy)', async () => {
    // The demo reader's printed slip (bridge/dialects/plain-printout.ts); the bridge sent one copy.
    const slip = '---- RESULT ----\r\nTEST      cCRP\r\nRESULT    37.4 mg/L\r\nSAMPLE    A-1023\r\nDATE      01.12.2026\r\nTIME      14:03:22\r\nSN        SIM-0001\r\n---- END ----\r\n';
    const parsed = await readCaptureBytes(getDialect('plain-printout'), Buffer.from(slip, 'latin1'), 'point');
    expect(parsed).toEqual([expect.objectContaining({ kind: 'reading', analyte: 'cCRP', value: 37.4 })]);
    expect((await ingest(bridgeToken, [{ key: randomUUID(), instrument: crpReader.code, receivedAt: new Date().toISOString(), payload: parsed[0] }])).status).toBe(200);
    const preview = await body(await upload({ step: 'preview', instrumentId: crpReader.id }, Buffer.from(slip + slip, 'latin1')));
    expect(preview.summary).toMatchObject({ readingsNew: 1, readingsAlreadyStored: 1 });
  });

  it('a file that is not what the instrument sends is kept as unparsed captures, for a person to read', async () => {
    // Bytes with no ENQ: nothing of it is an E1381 session.
    const junk = Buffer.from('R|1|^^^GLU|5.4|mmol/L\r\n\x02garbled frame without a session\r\n', 'latin1');
    const response = await upload({ step: 'confirm', instrumentId: chemistry.id }, junk, { name: 'wrong-port.log' });
    expect(response.status).toBe(201);
    const done = await body(response);
    expect(done.summary.readingsNew).toBe(0);
    expect(done.summary.capturesNew).toBeGreaterThanOrEqual(1);
    const captures = await database.db.select().from(unparsedCaptures).where(eq(unparsedCaptures.captureImportId, done.id));
    expect(captures.map((c) => c.raw).join('')).toContain('garbled frame');
    // Listed with the open captures, and a person can type the result in from it like from any other.
    const tech = await signIn('tech@fernhollow.example');
    const open = (await body(await listCaptures(request('/api/captures?status=open', { cookie: tech }), undefined))).captures;
    expect(open.map((c: { id: string }) => c.id)).toEqual(expect.arrayContaining(captures.map((c) => c.id)));
    const typed = await transcribe(
      request('/api/captures/x/transcribe', { cookie: tech, body: { analyte: 'cCRP', value: '12.5', unit: 'mg/L', measuredAt: '2026-12-01T10:15:00+00:00' } }),
      params({ captureId: captures[0].id }),
    );
    expect(typed.status).toBe(201);
    const [reading] = await database.db.select().from(readings).where(eq(readings.id, (await body(typed)).readingId));
    expect(reading).toMatchObject({ bridgeId: null, captureImportId: done.id, status: 'unassigned', flags: ['transcribed'] });
  });

  it('refuses with a clear 4xx: too large (413), empty, no instrument, unknown instrument, not an administrator, not multipart', async () => {
    const big = new Uint8Array(CAPTURE_IMPORT_LIMITS.maxBytes + 1).fill(0x41);
    const tooBig = await upload({ step: 'preview', instrumentId: chemistry.id }, big);
    expect(tooBig.status).toBe(413);
    expect((await body(tooBig)).error).toMatchObject({ code: 'file_too_large', issues: [{ path: 'file' }] });

    // Under 2 MB but more slips than one import takes.
    const slips = Array.from({ length: CAPTURE_IMPORT_LIMITS.maxRecords + 1 }, (_, i) => `---- RESULT ----\r\nTEST      cCRP\r\nRESULT    ${(i % 90) + 5}.1 mg/L\r\nSAMPLE    B-${i}\r\n---- END ----\r\n`).join('');
    const many = await upload({ step: 'preview', instrumentId: crpReader.id }, Buffer.from(slips, 'latin1'));
    expect(many.status).toBe(413);
    expect((await body(many)).error.code).toBe('too_many_records');

    const empty = await upload({ step: 'preview', instrumentId: chemistry.id }, new Uint8Array(0));
    expect(empty.status).toBe(400);
    expect((await body(empty)).error.code).toBe('empty_file');

    const noInstrument = await upload({ step: 'preview' }, FIRST);
    expect(noInstrument.status).toBe(400);
    expect((await body(noInstrument)).error.issues[0].path).toBe('instrumentId');

    expect((await upload({ step: 'preview', instrumentId: randomUUID() }, FIRST)).status).toBe(404);
    const tech = await signIn('tech@fernhollow.example');
    expect((await upload({ step: 'preview', instrumentId: chemistry.id }, FIRST, { cookie: tech })).status).toBe(403);

    const json = await importRoute.POST(request('/api/admin/capture-imports', { cookie: admin, body: { step: 'preview', instrumentId: chemistry.id } }), undefined);
    expect(json.status).toBe(415);
  });

  it('lists the imports: who, which file, for which instrument, what each added', async () => {
    const list = await body(await importRoute.GET(request('/api/admin/capture-imports', { cookie: admin }), undefined));
    expect(list.imports.length).toBeGreaterThanOrEqual(4);
    expect(list.imports.find((i: { fileName: string }) => i.fileName === 'chem-2026-12-01.log')).toMatchObject({ instrumentCode: chemistry.code, readingsAdded: 2, capturesAdded: 1 });
  });

  it('never places an imported reading on a patient, even with the exact-ID rule on and a test waiting for that tube', async () => {
    expect((await adminClinical.PATCH(request('/api/admin/clinical', { method: 'PATCH', cookie: admin, body: { autoAssignExactId: true } }), undefined)).status).toBe(200);
    const tech = await signIn('tech@fernhollow.example');
    const juniper = await patientByRecord(database.db, clinicId, 'FH-1002');
    const vet = await staffByEmail(database.db, 'vet@fernhollow.example');
    const slip = (sample: string) => `---- RESULT ----\r\nTEST      cCRP\r\nRESULT    18.2 mg/L\r\nSAMPLE    ${sample}\r\n---- END ----\r\n`;
    const started = await orders.POST(
      request('/api/orders', { cookie: tech, body: { analyte: 'cCRP', sampleType: 'whole_blood', orderedBy: vet.id, patientId: juniper.id, instrumentId: crpReader.id, sampleId: 'T-9301', startedAt: new Date(Date.now() - 725_000).toISOString() } }),
      undefined,
    );
    expect(started.status).toBe(201);
    const done = await body(await upload({ step: 'confirm', instrumentId: crpReader.id }, Buffer.from(slip('T-9301'), 'latin1')));
    expect(done.summary.readingsNew).toBe(1);
    const [imported] = await database.db.select().from(readings).where(eq(readings.captureImportId, done.id));
    expect(imported).toMatchObject({ sampleId: 'T-9301', status: 'unassigned', patientId: null });
    // The same slip from the bridge is placed by the rule: it is on, and the test is still open.
    const [fromBridge] = await readCaptureBytes(getDialect('plain-printout'), Buffer.from(slip('T-9301'), 'latin1'), 'point');
    const sent = await body(await ingest(bridgeToken, [{ key: randomUUID(), instrument: crpReader.code, receivedAt: new Date().toISOString(), payload: fromBridge }]));
    const [placed] = await database.db.select().from(readings).where(eq(readings.id, sent.results[0].id));
    expect(placed).toMatchObject({ status: 'assigned', patientId: juniper.id });
  });

  it('reads a profile-read instrument with its printout profile’s latest version, as the bridge does', async () => {
    // An invented electrolyte printer (as in tests/integration/profiles.test.ts): decimal commas, one line per test.
    const slip = ['*** ELECTROLYTES ***', 'ID: S-204', 'Na   145,2 mmol/L', 'K    4,1 mmol/L', 'Cl   <80 mmol/L', '01/12/2026 14:05', '*** END ***', 'PAPER LOW', ''].join('\r\n');
    const definition = (tests: string) => ({
      analyzer: 'Electrolyte printer (bench 3)',
      record: { start: '^\\*\\*\\* ELECTROLYTES', end: '^\\*\\*\\* END' },
      fields: [
        { label: 'Sample', pattern: '^ID:\\s*(?<sampleId>\\S+)' },
        { label: 'Result', pattern: `^(?<analyte>${tests})\\s+(?<comparator>[<>])?(?<value>[0-9.,]+)\\s+(?<unit>\\S+)`, repeats: true, required: true },
        { label: 'Printed at', pattern: '^(?<date>\\d\\d/\\d\\d/\\d{4}) (?<time>\\d\\d:\\d\\d)' },
      ],
      decimalComma: true,
      dateFormat: 'DD/MM/YYYY',
      timeFormat: 'HH:mm',
    });
    const created = await createProfile(request('/api/admin/profiles', { cookie: admin, body: { name: 'Electrolytes', definition: definition('Na|K') } }), undefined);
    expect(created.status).toBe(201);
    const { profile } = await body(created);
    const revised = await reviseProfile(request('/api/admin/profiles/x/versions', { cookie: admin, body: { name: 'Electrolytes', definition: definition('Na|K|Cl') } }), params({ profileKey: profile.key }));
    expect((await body(revised)).profile.version).toBe(2);
    const added = await addInstrument(request('/api/admin/instruments', { cookie: admin, body: { code: 'lyte-printer', name: 'Electrolyte printer', analytes: ['Na', 'K', 'Cl'], dialect: 'profile', profileId: profile.key } }), undefined);
    expect(added.status).toBe(201);
    const { instrument } = await body(added);
    const preview = await body(await upload({ step: 'preview', instrumentId: instrument.id }, Buffer.from(slip, 'latin1')));
    expect(preview.readWith).toEqual({ dialect: 'profile', profileKey: profile.key, profileVersion: 2 });
    expect(preview.items.filter((i: { kind: string }) => i.kind === 'reading')).toEqual([
      expect.objectContaining({ analyte: 'Na', value: 145.2, sampleId: 'S-204' }),
      expect.objectContaining({ analyte: 'K', value: 4.1 }),
      expect.objectContaining({ analyte: 'Cl', value: 80, comparator: '<' }),
    ]);
    // The printer's other text is kept for a person to read.
    expect(preview.items.filter((i: { kind: string }) => i.kind === 'unparsed').map((i: { raw: string }) => i.raw).join('')).toContain('PAPER LOW');
  });
});
