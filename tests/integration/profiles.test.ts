// Printout profiles on the server: saving (validated, versioned), the editor's preview (which runs the
// bridge's own engine) and delivery to the bridge through GET /api/bridge/config.
import { beforeAll, describe, expect, it } from 'vitest';
import { body } from './support';
import { GET as bridgeConfig } from '@/app/api/bridge/config/route';
import { GET as listInstruments, POST as addInstrument } from '@/app/api/admin/instruments/route';
import { GET as listProfiles, POST as createProfile } from '@/app/api/admin/profiles/route';
import { GET as getProfile } from '@/app/api/admin/profiles/[profileKey]/route';
import { POST as reviseProfile } from '@/app/api/admin/profiles/[profileKey]/versions/route';
import { POST as preview } from '@/app/api/admin/profiles/preview/route';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

// An invented electrolyte printer: one slip per sample, one line per test, decimal commas.
const SLIP = [
  '*** ELECTROLYTES ***',
  'ID: S-204',
  'Na   145,2 mmol/L',
  'K    4,1 mmol/L',
  'Cl   <80 mmol/L',
  '01/12/2026 14:05',
  '*** END ***',
  'PAPER LOW',
  '',
].join('\r\n');

const definition = {
  analyzer: 'Electrolyte printer (bench 3)',
  record: { start: '^\\*\\*\\* ELECTROLYTES', end: '^\\*\\*\\* END' },
  fields: [
    { label: 'Sample', pattern: '^ID:\\s*(?<sampleId>\\S+)' },
    { label: 'Result', pattern: '^(?<analyte>Na|K|Cl)\\s+(?<comparator>[<>])?(?<value>[0-9.,]+)\\s+(?<unit>\\S+)', repeats: true, required: true },
    { label: 'Printed at', pattern: '^(?<date>\\d\\d/\\d\\d/\\d{4}) (?<time>\\d\\d:\\d\\d)' },
  ],
  decimalComma: true,
  dateFormat: 'DD/MM/YYYY',
  timeFormat: 'HH:mm',
};

let admin: string;
let tech: string;
let bridgeToken: string;
beforeAll(async () => {
  ({ bridgeToken } = await seededDatabase());
  admin = await signIn('admin@fernhollow.example');
  tech = await signIn('tech@fernhollow.example');
});

describe('printout profiles', () => {
  it('previews a captured printout with the bridge engine: one reading per result line, the rest kept', async () => {
    const response = await preview(request('/api/admin/profiles/preview', { cookie: admin, body: { definition, sample: SLIP } }), undefined);
    expect(response.status).toBe(200);
    const { items } = await body(response);
    const readings = items.filter((i: { kind: string }) => i.kind === 'reading');
    // Three result lines → three readings; decimal commas read as points; "<80" keeps its comparator.
    expect(readings.map((r: { reading: { analyte: string; value: number; comparator: string | null } }) => [r.reading.analyte, r.reading.value, r.reading.comparator])).toEqual([
      ['Na', 145.2, null],
      ['K', 4.1, null],
      ['Cl', 80, '<'],
    ]);
    expect(readings[0].reading.sampleId).toBe('S-204');
    expect(readings[0].reading.measuredAt).toMatch(/^2026-12-01T14:05:00/);
    // The stray "PAPER LOW" line is not dropped: it comes back as unread text.
    expect(items.some((i: { kind: string; raw: string }) => i.kind === 'unparsed' && i.raw.includes('PAPER LOW'))).toBe(true);
  });

  it('rejects a bad profile with a message that points at the field', async () => {
    const bad = { ...definition, fields: [{ label: 'Result', pattern: '^(?<value>[0-9' }] };
    const response = await createProfile(request('/api/admin/profiles', { cookie: admin, body: { name: 'Broken', definition: bad } }), undefined);
    expect(response.status).toBe(400);
    const { error } = await body(response);
    expect(error.issues.map((i: { path: string }) => i.path)).toContain('definition.fields.0.pattern');

    const unknownName = { ...definition, fields: [{ label: 'Result', pattern: '^(?<reading>[0-9]+)' }] };
    const second = await body(await createProfile(request('/api/admin/profiles', { cookie: admin, body: { name: 'Broken', definition: unknownName } }), undefined));
    expect(second.error.issues.find((i: { path: string }) => i.path === 'definition.fields.0.pattern').message).toMatch(/Unknown capture name "reading"/);
  });

  it('refuses at save a pattern the linear-time engine cannot run (backreference, lookahead), naming the field and why', async () => {
    // RE2 syntax (the engine profiles run in) has no backreferences and no lookaround.
    for (const [pattern, why] of [
      ['^(?<value>\\d)\\1', /backreference/],
      ['^(?<value>\\d+)(?= mmol)', /lookahead and lookbehind/],
    ] as const) {
      const bad = { ...definition, fields: [definition.fields[0], { label: 'Result', pattern, repeats: true }] };
      const response = await createProfile(request('/api/admin/profiles', { cookie: admin, body: { name: 'Refused', definition: bad } }), undefined);
      expect(response.status).toBe(400);
      const issue = (await body(response)).error.issues.find((i: { path: string }) => i.path === 'definition.fields.1.pattern');
      expect(issue.message).toMatch(why);
    }
  });

  it('previews a catastrophic-backtracking pattern on a long line and answers correctly', async () => {
    // ^(a+)+$ on a line of a's ending in another character is exponential for a backtracking engine
    // (OWASP, "Regular expression Denial of Service"); it is accepted and runs in linear time here.
    const risky = { ...definition, fields: [...definition.fields, { label: 'Filler', pattern: '^(a+)+$' }] };
    // Inside the record, so the pattern is tried on it; just under the bridge's 4,096-byte line limit.
    const sample = SLIP.replace('*** END ***', `${'a'.repeat(4_000)}!\r\n*** END ***`);
    const response = await preview(request('/api/admin/profiles/preview', { cookie: admin, body: { definition: risky, sample } }), undefined);
    expect(response.status).toBe(200);
    const { items } = await body(response);
    // The filler line matches nothing (it ends in "!"), so the slip reads as without it.
    const readings = items.filter((i: { kind: string }) => i.kind === 'reading');
    expect(readings.map((i: { reading: { analyte: string } }) => i.reading.analyte)).toEqual(['Na', 'K', 'Cl']);
  });

  it('saves versions, keeps every one, and hands the latest to the bridge that reads the instrument', async () => {
    const created = await createProfile(request('/api/admin/profiles', { cookie: admin, body: { name: 'Electrolytes', definition } }), undefined);
    expect(created.status).toBe(201);
    const { profile } = await body(created);
    expect(profile.version).toBe(1);

    const revised = await reviseProfile(
      request('/api/admin/profiles/x/versions', { cookie: admin, body: { name: 'Electrolytes', definition: { ...definition, unit: 'mmol/L' } } }),
      params({ profileKey: profile.key }),
    );
    expect((await body(revised)).profile.version).toBe(2);
    const history = await body(await getProfile(request('/api/admin/profiles/x', { cookie: admin }), params({ profileKey: profile.key })));
    expect(history.profile.versions.map((v: { version: number }) => v.version)).toEqual([2, 1]);
    const listed = (await body(await listProfiles(request('/api/admin/profiles', { cookie: admin }), undefined))).profiles;
    expect(listed.find((p: { key: string }) => p.key === profile.key)).toMatchObject({ name: 'Electrolytes', version: 2 });

    const bridges = (await body(await listInstruments(request('/api/admin/instruments', { cookie: admin }), undefined))).instruments;
    const bridgeId = bridges.find((i: { code: string }) => i.code === 'crp-reader').bridgeId;
    const added = await addInstrument(
      request('/api/admin/instruments', {
        cookie: admin,
        body: { code: 'lyte-printer', name: 'Electrolyte printer', analytes: ['Na', 'K', 'Cl'], dialect: 'profile', profileId: profile.key, bridgeId, connection: { kind: 'tcp', host: '127.0.0.1', port: 4010 } },
      }),
      undefined,
    );
    expect(added.status).toBe(201);

    const config = await bridgeConfig(request('/api/bridge/config', { token: bridgeToken }), undefined);
    expect(config.status).toBe(200);
    const etag = config.headers.get('etag');
    const { instruments } = await body(config);
    const lyte = instruments.find((i: { code: string }) => i.code === 'lyte-printer');
    expect(lyte.profile).toMatchObject({ key: profile.key, version: 2, definition: { unit: 'mmol/L' } });
    // RFC 9110 §13.1.2: a matching If-None-Match on a GET is answered 304 Not Modified.
    const again = await bridgeConfig(request('/api/bridge/config', { token: bridgeToken, headers: { 'if-none-match': etag! } }), undefined);
    expect(again.status).toBe(304);
  });

  it('a profile-read instrument must name its profile', async () => {
    const response = await addInstrument(
      request('/api/admin/instruments', { cookie: admin, body: { code: 'no-profile', name: 'No profile', analytes: ['Na'], dialect: 'profile' } }),
      undefined,
    );
    expect(response.status).toBe(400);
    expect((await body(response)).error.issues.map((i: { path: string }) => i.path)).toContain('profileId');
  });

  it('is for administrators only', async () => {
    expect((await listProfiles(request('/api/admin/profiles', { cookie: tech }), undefined)).status).toBe(403);
    expect((await preview(request('/api/admin/profiles/preview', { cookie: tech, body: { definition, sample: SLIP } }), undefined)).status).toBe(403);
  });
});
