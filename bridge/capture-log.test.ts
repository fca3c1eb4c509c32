import { mkdir, readdir, readFile, symlink, unlink } from 'node:fs/promises';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { CaptureLog } from './capture-log';
import { plainPrintout } from './dialects/plain-printout';
import { captureWarning, startInstrument } from './pipeline';
import { openFileSource } from './sources/file';
import { Spool } from './spool';
import { tempDir } from './testing/payloads';

// The rotation scheme is ours (common practice for logs, no source): capture.log is the newest,
// capture.1.log the one before, at most `files` kept, each at most maxBytes unless one chunk is larger.

let dir: string;
let cleanup: () => Promise<void>;

beforeEach(async () => {
  ({ dir, cleanup } = await tempDir());
});
afterEach(() => cleanup());

describe('CaptureLog', () => {
  it('keeps every byte as received, in order, control bytes and all', async () => {
    const log = new CaptureLog(dir);
    const chunks = [Buffer.from([0x05]), Buffer.from('\x021H|\\^&\r\x03AB\r\n'), Buffer.from([0x00, 0xff, 0x1c])];
    await Promise.all(chunks.map((chunk) => log.append(chunk)));
    await log.close();
    expect(await readFile(log.path)).toEqual(Buffer.concat(chunks));
  });

  it('rotates by size and keeps at most the configured number of files', async () => {
    const log = new CaptureLog(dir, { maxBytes: 10, files: 3 });
    for (let i = 0; i < 5; i++) await log.append(Buffer.from(`chunk-${i}|`));
    await log.close();
    expect((await readdir(dir)).sort()).toEqual(['capture.1.log', 'capture.2.log', 'capture.log']);
    expect(await readFile(log.path, 'utf8')).toBe('chunk-4|');
    expect(await readFile(`${dir}/capture.1.log`, 'utf8')).toBe('chunk-3|');
    expect(await readFile(`${dir}/capture.2.log`, 'utf8')).toBe('chunk-2|');
  });

  it('appends to what an earlier run left, and never rejects when it cannot write', async () => {
    const first = new CaptureLog(dir);
    await first.append(Buffer.from('one '));
    await first.close();
    const second = new CaptureLog(dir);
    await second.append(Buffer.from('two'));
    await second.close();
    expect(await readFile(second.path, 'utf8')).toBe('one two');

    const errors: string[] = [];
    // A folder below a plain file cannot be made (ENOTDIR).
    const broken = new CaptureLog(`${second.path}/capture`, { log: { info() {}, warn() {}, error: (m) => errors.push(m) } });
    await expect(broken.append(Buffer.from('x'))).resolves.toBeUndefined();
    await broken.close();
    expect(errors[0]).toMatch(/cannot write the raw capture log/);
  });

  // A disk that is full: writing to Linux's /dev/full always fails with ENOSPC (null(4) man page), so
  // capture.log pointing at it is a real ENOSPC, not a simulated one.
  it.runIf(process.platform === 'linux')('counts what a full disk kept out of the log, and says so in the link health', async () => {
    const full = join(dir, 'full');
    await mkdir(full);
    await symlink('/dev/full', join(full, 'capture.log'));
    const log = new CaptureLog(full);
    await expect(log.append(Buffer.from('12345'))).resolves.toBeUndefined();
    await log.append(Buffer.from('678'));
    expect(log.problem()).toEqual({ writing: false, lostBytes: 8, lostChunks: 2, lastError: 'ENOSPC' });
    // Space again: the log goes on, and the gap stays counted.
    await unlink(join(full, 'capture.log'));
    await log.append(Buffer.from('ok'));
    expect(log.problem()).toEqual({ writing: true, lostBytes: 8, lostChunks: 2, lastError: 'ENOSPC' });
    expect(await readFile(join(full, 'capture.log'), 'utf8')).toBe('ok');
    await log.close();
    await unlink(join(full, 'capture.log'));
    await symlink('/dev/full', join(full, 'capture.log'));

    // Through a whole instrument pipeline: the readings are spooled and the heartbeat carries the warning.
    const slips = new URL('./fixtures/plain-printout/mixed.txt', import.meta.url).pathname;
    const text = await readFile(slips);
    const spool = await Spool.open(join(dir, 'spool'));
    const instrument = startInstrument({ code: 'crp', dialect: plainPrintout, source: openFileSource(slips), spool, captureDir: full });
    await instrument.done;
    const warnings = instrument.status().warnings ?? [];
    expect(warnings).toEqual([captureWarning({ writing: false, lostBytes: text.length, lostChunks: 1, lastError: 'ENOSPC' })]);
    expect(warnings[0]).toMatch(/^raw capture log cannot be written \(ENOSPC; disk full or failing\?\): \d+ byte\(s\) in 1 piece\(s\) not logged/);
    expect(spool.pending().length).toBeGreaterThan(0);
    await spool.close();
  });
});

