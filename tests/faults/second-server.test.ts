import path from 'node:path';
import { afterAll, expect, inject, it } from 'vitest';
import { removeTempDirs, untilDelivered, BridgeProcess, SerialLink, ServerProcess, countStored, dataDirFrom, sampleIdOf, scaled, slip, stopAll, summarize, tempDir } from './harness';

// A second server started on a data dir in use (a restart racing a server that has not died) must
// refuse to start, naming the first one's pid, while the first goes on storing what the bridge sends.
// A second bridge on the same spool must refuse too.
let server: ServerProcess | undefined;
let second: ServerProcess | undefined;
let bridge: BridgeProcess | undefined;
let secondBridge: BridgeProcess | undefined;
let link: SerialLink | undefined;
afterAll(async () => {
  await stopAll(secondBridge, bridge, link, second, server);
  removeTempDirs();
});

it('a second server on the same data dir refuses; the first stores every record once', async () => {
  const { dataDir, token } = dataDirFrom(inject('faultsTemplate'), 'second');
  const work = tempDir('second-work');
  const spool = path.join(work, 'spool');
  server = await ServerProcess.start(dataDir);
  link = new SerialLink(work);
  await link.plugIn();
  const b = (bridge = BridgeProcess.spawn({ server: server.url, token, spool, device: link.device }));
  await b.untilReading();

  const count = scaled(100, 10);
  const sent: string[] = [];
  for (let seq = 1; seq <= count; seq++) {
    const id = sampleIdOf('F2', seq);
    await link.print(slip(id, seq));
    sent.push(id);
    if (seq === Math.ceil(count / 3)) second = ServerProcess.spawn(dataDir, server.port + 1 === 65536 ? 1024 : server.port + 1);
    if (seq === Math.ceil((2 * count) / 3)) secondBridge = BridgeProcess.spawn({ server: server.url, token, spool, device: link.device });
  }
  const refused = await second!.exited;
  const bridgeRefused = await secondBridge!.exited;
  expect(refused.code).not.toBe(0);
  expect(second!.output).toContain(`in use by the Benchwire server (pid ${server.pid}`);
  expect(bridgeRefused.code).not.toBe(0);
  expect(secondBridge!.output).toContain(`in use by a Benchwire bridge (pid ${b.pid}`);
  await untilDelivered(b, sent, spool);
  await stopAll(bridge, server);
  const summary = summarize('second server on the same data dir (refused), second bridge on the same spool (refused)', sent, await countStored(dataDir, 'F2'));
  expect(summary.lostIds).toEqual([]);
  expect(summary.duplicateIds).toEqual([]);
  expect(summary.stored).toBe(count);
});
