import path from 'node:path';
import { afterAll, expect, inject, it } from 'vitest';
import { removeTempDirs, untilDelivered, BridgeProcess, Proxy, SerialLink, ServerProcess, countStored, dataDirFrom, random, sampleIdOf, scaled, sleep, slip, stopAll, summarize, tempDir, waitFor } from './harness';

// The server is SIGKILLed while it handles a batch upload (a proxy sees the whole request go up and
// kills it 0–40 ms later: before, during or after the commit), then started again on the same data dir
// (stale lock recovered, database recovered). The bridge sends what was not confirmed again; the
// idempotency keys keep a batch that was committed before the kill from being stored twice.
let server: ServerProcess | undefined;
let bridge: BridgeProcess | undefined;
let link: SerialLink | undefined;
let proxy: Proxy | undefined;
afterAll(async () => {
  await stopAll(bridge, link, proxy, server);
  removeTempDirs();
});

it('server SIGKILLed mid-batch: every record stored once after the restarts', async () => {
  const { dataDir, token } = dataDirFrom(inject('faultsTemplate'), 'serverkill');
  const work = tempDir('serverkill-work');
  server = await ServerProcess.start(dataDir);
  proxy = await new Proxy().listen(server.port);
  link = new SerialLink(work);
  await link.plugIn();
  bridge = BridgeProcess.spawn({ server: proxy.url, token, spool: path.join(work, 'spool'), device: link.device });
  await bridge.untilReading();

  const kills = scaled(5, 2);
  const count = scaled(250, 20);
  const rand = random(3);
  let killed = 0;
  let armed = false;
  let restarting: Promise<void> | undefined;
  proxy.onRequest = (head) => {
    if (!armed || !head.startsWith('POST /api/bridge/readings')) return;
    armed = false;
    const victim = server!;
    restarting = (async () => {
      await sleep(Math.floor(rand() * 40));
      await victim.kill('SIGKILL');
      killed++;
      server = await ServerProcess.start(dataDir);
      proxy!.target = server.port;
    })();
  };
  const sent: string[] = [];
  for (let seq = 1; seq <= count; seq++) {
    const id = sampleIdOf('FS', seq);
    await link.print(slip(id, seq));
    sent.push(id);
    // Slips come in bursts (a run of samples), so batches hold several records; arm a kill every so often.
    if (seq % Math.floor(count / (kills + 1)) === 0 && killed < kills) {
      // The kill armed last time must have happened first: after a restart the bridge may still be
      // backing off while the next slips print, and re-arming then would lose a kill.
      if (armed) await waitFor('the armed kill', () => !armed, 120_000);
      await restarting;
      if (killed < kills) armed = true;
    }
  }
  await waitFor(`${kills} kills`, () => killed >= kills || !armed, 120_000);
  await restarting;
  await untilDelivered(bridge, sent, path.join(work, 'spool'));
  await stopAll(bridge, server);
  const summary = summarize(`server SIGKILLed mid-batch ${killed} times`, sent, await countStored(dataDir, 'FS'));
  expect(killed).toBe(kills);
  expect(summary.lostIds).toEqual([]);
  expect(summary.duplicateIds).toEqual([]);
  expect(summary.stored).toBe(count);
});
