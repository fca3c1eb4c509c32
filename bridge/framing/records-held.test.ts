import { PassThrough } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { profileDefinitionSchema } from '../../lib/validation/profile';
import type { ParserOutput } from '../../lib/validation/readings';
import { profileDialect } from '../dialects/profile';
import { createParsingStages } from '../parse-stage';
import { SpoolWriter } from '../pipeline';
import { Spool } from '../spool';
import { tempDir } from '../testing/payloads';
import { OUTSIDE_RECORD } from './records';

// A held-back pipeline is not a quiet line (common practice, no source: the "no end line" timer is
// ours). When the spool cannot write (disk full), lines wait in the stream buffers before the record
// stage; the idle timer must not cut the slip it is holding into fragments meanwhile.

const definition = await profileDefinitionSchema.parseAsync({
  analyzer: 'Invented single-test reader',
  record: { start: '^BEGIN', end: '^END', idleMs: 200 },
  analyte: 'CRP',
  unit: 'mg/L',
  fields: [
    { label: 'Sample', pattern: '^ID:\\s*(?<sampleId>\\S+)', required: true },
    { label: 'Result', pattern: '^CRP\\s+(?<value>\\d+)', required: true },
  ],
});

// A notice before each slip (text outside any record) is what makes the record stage push an output
// at a start line and then hold the new slip's first line while the stages after it are full.
const slip = (n: number) => `PAPER LOW\r\nBEGIN\r\nID: S-${n}\r\nCRP ${n}\r\nEND\r\n`;

let cleanups: (() => Promise<void>)[] = [];
afterEach(async () => {
  vi.restoreAllMocks();
  for (const cleanup of cleanups) await cleanup();
  cleanups = [];
});

describe('record timer while the spool cannot write', () => {
  it('keeps every slip whole through the real stages while the disk is full for a few seconds', async () => {
    const { dir, cleanup } = await tempDir();
    cleanups.push(cleanup);
    const spool = await Spool.open(dir);
    cleanups.unshift(() => spool.close());
    // A simulated ENOSPC for the first three appends (the spool's own retry waits 0.25–2 s between them).
    const realAppend = spool.append.bind(spool);
    let refusals = 3;
    vi.spyOn(spool, 'append').mockImplementation((instrument, payload, receivedAt) => {
      if (refusals-- > 0) return Promise.reject(Object.assign(new Error('ENOSPC: no space left on device, write'), { code: 'ENOSPC' }));
      return realAppend(instrument, payload, receivedAt);
    });

    const count = 150; // far more than the stream buffers between the record stage and the spool hold
    const source = new PassThrough();
    const done = pipeline([source, ...createParsingStages(profileDialect(definition)), new SpoolWriter(spool, 'crp', { info() {}, warn() {}, error() {} })]);
    source.end(Buffer.from(Array.from({ length: count }, (_, i) => slip(i + 1)).join('')));
    await done;

    const outputs: ParserOutput[] = spool.pending().map((record) => record.payload);
    // Each notice stays unparsed text on its own; no slip is cut short.
    expect(outputs.map((o) => (o.kind === 'reading' ? [o.sampleId, o.value] : o.reason))).toEqual(
      Array.from({ length: count }, (_, i) => [OUTSIDE_RECORD, [`S-${i + 1}`, i + 1]]).flat(),
    );
  }, 60_000);
});
