import { join } from 'node:path';
import { writeFile } from 'node:fs/promises';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { plainPrintout } from '../dialects/plain-printout';
import { startInstrument } from '../pipeline';
import { Spool } from '../spool';
import { tempDir } from '../testing/payloads';
import { openFileSource } from './file';

// A capture file read end to end is the same byte stream as a cable (common practice, no source).

let dir: string;
let cleanup: () => Promise<void>;
let spool: Spool;

beforeEach(async () => {
  ({ dir, cleanup } = await tempDir());
  spool = await Spool.open(join(dir, 'spool'));
});

afterEach(async () => {
  await spool.close();
  await cleanup();
});

describe('file source', () => {
  it('reads a capture file to the end into the spool, then reports closed', async () => {
    const capture = join(dir, 'capture.txt');
    await writeFile(capture, '---- RESULT ----\nTEST      cCRP\nRESULT    8.0 mg/L\n---- END ----\nFEED\n');
    const source = openFileSource(capture);
    const instrument = startInstrument({ code: 'crp-reader', dialect: plainPrintout, source, spool });
    await instrument.done;
    expect(spool.pending().map((record) => record.payload.kind)).toEqual(['reading', 'unparsed']);
    expect(source.state()).toEqual({ state: 'closed', detail: capture });
  });

  it('reports a missing file as an error state', async () => {
    const source = openFileSource(join(dir, 'missing.txt'));
    const instrument = startInstrument({ code: 'crp-reader', dialect: plainPrintout, source, spool });
    await instrument.done;
    expect(source.state()).toMatchObject({ state: 'error', detail: expect.stringMatching(/ENOENT/) });
    expect(spool.depth()).toBe(0);
  });
});
