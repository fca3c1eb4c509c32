import path from 'node:path';
import { afterAll, expect, inject, it } from 'vitest';
import { removeTempDirs, untilDelivered, BridgeProcess, SerialLink, ServerProcess, countStored, dataDirFrom, sampleIdOf, scaled, slip, stopAll, summarize, tempDir, waitFor } from './harness';

// The server is stopped while the analyzer prints; the bridge spools every slip and sends them all once
// the server is back. Counted from the database: each sample ID stored exactly once.
let server: ServerProcess | undefined;
let bridge: BridgeProcess | undefined;
let link: SerialLink | undefined;
afterAll(async () => {
  await stopAll(bridge, link, server);
  removeTempDirs();
});

it('server down while records print: every record stored once after it returns', async () => {
  const { dataDir, token } = dataDirFrom(inject('faultsTemplate'), 'down');
  const work = tempDir('down-work');
  server = await ServerProcess.start(dataDir);
  const port = server.port;
  link = new SerialLink(work);
  await link.plugIn();
  bridge = BridgeProcess.spawn({ server: server.url, token, spool: path.join(work, 'spool'), device: link.device });
  await bridge.untilReading();

  await server.kill('SIGTERM');
  const count = scaled(200);
  const sent: string[] = [];
  for (let seq = 1; seq <= count; seq++) {
    const id = sampleIdOf('FD', seq);
    await link.print(slip(id, seq));
    sent.push(id);
  }
  const b = bridge;
  await waitFor('every slip spooled', () => sent.every((id) => b.captured.has(id)), 120_000, () => b.output);

  // Back on the same address, as a restarted service would be.
  server = ServerProcess.spawn(dataDir, port);
  await untilDelivered(b, sent, path.join(work, 'spool'));
  await stopAll(bridge, server);
  const summary = summarize('server down while printing', sent, await countStored(dataDir, 'FD'));
  expect(summary.lostIds).toEqual([]);
  expect(summary.duplicateIds).toEqual([]);
  expect(summary.stored).toBe(count);
});
