import { execFileSync } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import { afterAll, expect, inject, it } from 'vitest';
import { removeTempDirs, untilDelivered, BridgeProcess, SerialLink, ServerProcess, countStored, dataDirFrom, sampleIdOf, scaled, sleep, slip, stopAll, summarize, tempDir, waitFor } from './harness';

// The spool's disk fills up while slips print. The spool is on a small tmpfs of its own (mount needs
// root; elsewhere a preload makes every write of the bridge fail with ENOSPC while a flag file exists).
// The bridge holds the slip it cannot write (and, by backpressure, the serial line), retries, and
// carries on once there is room: nothing lost, nothing doubled, no slip cut in two by the record
// timer while the pipeline was held. The disk stays full longer than that timer (15 s).
let server: ServerProcess | undefined;
let bridge: BridgeProcess | undefined;
let link: SerialLink | undefined;
let mounted: string | undefined;
afterAll(async () => {
  await stopAll(bridge, link, server);
  if (mounted) execFileSync('umount', [mounted]);
  removeTempDirs();
});

function tryMount(dir: string): boolean {
  if (process.env.FAULTS_SIMULATE_ENOSPC === '1') return false;
  try {
    execFileSync('mount', ['-t', 'tmpfs', '-o', 'size=4m,mode=0700', 'tmpfs', dir], { stdio: 'pipe' });
    return true;
  } catch {
    return false;
  }
}

/** Fills the file system holding dir, to the last byte. */
function fill(file: string): void {
  const fd = fs.openSync(file, 'w');
  try {
    for (const size of [65_536, 1024, 1]) {
      const chunk = Buffer.alloc(size, 0x55);
      for (;;) {
        try {
          fs.writeSync(fd, chunk);
        } catch (error) {
          if ((error as NodeJS.ErrnoException).code === 'ENOSPC') break;
          throw error;
        }
      }
    }
  } finally {
    fs.closeSync(fd);
  }
}

it('spool disk full: slips wait, then every one is stored once', async () => {
  const { dataDir, token } = dataDirFrom(inject('faultsTemplate'), 'diskfull');
  const work = tempDir('diskfull-work');
  const spool = path.join(work, 'spool');
  fs.mkdirSync(spool, { mode: 0o700 });
  const real = tryMount(spool);
  if (real) mounted = spool;
  const flag = path.join(work, 'disk-full');
  const filler = path.join(spool, 'filler');
  server = await ServerProcess.start(dataDir);
  link = new SerialLink(work);
  await link.plugIn();
  const b = (bridge = BridgeProcess.spawn({
    server: server.url,
    token,
    spool,
    device: link.device,
    ...(real ? {} : { extraNodeArgs: ['--import', './tests/faults/enospc-preload.mjs'], env: { BENCHWIRE_FAULT_ENOSPC: flag } }),
  }));
  await b.untilReading();

  const count = scaled(100, 12);
  const sent: string[] = [];
  const print = async (from: number, to: number) => {
    for (let seq = from; seq <= to; seq++) {
      const id = sampleIdOf('FF', seq);
      sent.push(id);
      await link!.print(slip(id, seq));
    }
  };
  const first = Math.floor(count / 4);
  await print(1, first);
  await waitFor('the first slips spooled', () => sent.every((id) => b.captured.has(id)), 60_000, () => b.output);
  if (real) fill(filler);
  else fs.writeFileSync(flag, '');
  // The analyzer goes on printing; its writes block once the line's buffers are full.
  const printing = print(first + 1, count);
  await waitFor('the bridge to hit the full disk', () => /cannot write the spool/.test(b.output), 60_000, () => b.output);
  await sleep(20_000);
  if (real) fs.rmSync(filler);
  else fs.rmSync(flag);
  await printing;
  await untilDelivered(b, sent, spool);
  await stopAll(bridge, server);
  const stored = await countStored(dataDir, 'FF');
  const summary = summarize(`spool disk full for 20 s (${real ? 'a 4 MB tmpfs filled up' : 'simulated ENOSPC'})`, sent, stored, undefined, `${stored.fragments} slip(s) cut into unparsed text`);
  expect(summary.lostIds).toEqual([]);
  expect(summary.duplicateIds).toEqual([]);
  expect(stored.fragments).toBe(0);
  expect(summary.stored).toBe(count);
});
