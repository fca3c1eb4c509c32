import path from 'node:path';
import { afterAll, expect, inject, it } from 'vitest';
import { removeTempDirs, untilDelivered, BridgeProcess, SerialLink, ServerProcess, countStored, dataDirFrom, random, sampleIdOf, scaled, slip, stopAll, summarize, tempDir, waitFor } from './harness';

// The serial device disappears and comes back (socat stopped and started again removes and recreates
// the pty nodes, as pulling and re-plugging a USB-serial adapter does) at seeded moments between slips.
// The bridge reopens it by itself; every slip printed while it was there is stored once.
let server: ServerProcess | undefined;
let bridge: BridgeProcess | undefined;
let link: SerialLink | undefined;
afterAll(async () => {
  await stopAll(bridge, link, server);
  removeTempDirs();
});

it('serial device removed and recreated: reading goes on, nothing lost or doubled', async () => {
  const { dataDir, token } = dataDirFrom(inject('faultsTemplate'), 'replug');
  const work = tempDir('replug-work');
  server = await ServerProcess.start(dataDir);
  link = new SerialLink(work);
  await link.plugIn();
  const b = (bridge = BridgeProcess.spawn({ server: server.url, token, spool: path.join(work, 'spool'), device: link.device }));
  await b.untilReading();

  const replugs = scaled(10, 2);
  const count = scaled(200, 20);
  const rand = random(4);
  const replugAfter = new Set<number>();
  while (replugAfter.size < replugs) replugAfter.add(1 + Math.floor(rand() * (count - 1)));
  const sent: string[] = [];
  for (let seq = 1; seq <= count; seq++) {
    const id = sampleIdOf('FR', seq);
    await link.print(slip(id, seq));
    sent.push(id);
    if (replugAfter.has(seq)) {
      // Between slips: what was printed has reached the bridge (a slip cut by a pulled cable is text, not a reading).
      await waitFor('the printed slips read', () => sent.every((s) => b.captured.has(s)), 60_000, () => b.output);
      await link.unplug();
      await waitFor('the bridge to notice the device is gone', () => !b.reading, 60_000, () => b.output);
      await link.plugIn();
      await b.untilReading();
    }
  }
  await untilDelivered(b, sent, path.join(work, 'spool'));
  await stopAll(bridge, server);
  const summary = summarize(`serial device removed and recreated ${replugs} times`, sent, await countStored(dataDir, 'FR'));
  expect(summary.lostIds).toEqual([]);
  expect(summary.duplicateIds).toEqual([]);
  expect(summary.stored).toBe(count);
});
