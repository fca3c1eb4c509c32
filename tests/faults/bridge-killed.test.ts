import path from 'node:path';
import { afterAll, expect, inject, it } from 'vitest';
import { removeTempDirs, untilDelivered, BridgeProcess, SerialLink, ServerProcess, countStored, dataDirFrom, random, sampleIdOf, scaled, sleep, slip, stopAll, summarize, tempDir } from './harness';

// The bridge is SIGKILLed at seeded random moments while slips print (mid-slip, mid-spool, mid-upload)
// and started again on the same spool. A slip printed but not yet spooled at a kill was on the wire
// (in the pty or the dead process's memory): it may be lost, and is counted apart. Nothing spooled may
// be lost, and nothing may be stored twice (an upload the server took but the dead bridge never heard
// confirmed is sent again and answered "duplicate").
let server: ServerProcess | undefined;
let bridge: BridgeProcess | undefined;
let link: SerialLink | undefined;
afterAll(async () => {
  await stopAll(bridge, link, server);
  removeTempDirs();
});

it('bridge SIGKILLed at random moments: nothing spooled is lost or stored twice', async () => {
  const { dataDir, token } = dataDirFrom(inject('faultsTemplate'), 'bridgekill');
  const work = tempDir('bridgekill-work');
  const spool = path.join(work, 'spool');
  server = await ServerProcess.start(dataDir);
  link = new SerialLink(work);
  await link.plugIn();
  const startBridge = async () => {
    bridge = BridgeProcess.spawn({ server: server!.url, token, spool, device: link!.device });
    await bridge.untilReading();
  };
  await startBridge();

  const count = scaled(500, 20);
  const kills = scaled(20, 2);
  const rand = random(2);
  // Kill after these slips, each after a random delay (0–60 ms) while printing goes on.
  const killAfter = new Set<number>();
  while (killAfter.size < kills) killAfter.add(1 + Math.floor(rand() * (count - 1)));
  const sent: string[] = [];
  const everCaptured = new Set<string>();
  const onWire = new Set<string>();
  let killing: Promise<void> | undefined;
  for (let seq = 1; seq <= count; seq++) {
    if (killing) {
      await killing;
      killing = undefined;
    }
    const id = sampleIdOf('FK', seq);
    await link.print(slip(id, seq));
    sent.push(id);
    if (killAfter.has(seq)) {
      const victim = bridge!;
      const delay = Math.floor(rand() * 60);
      killing = (async () => {
        await sleep(delay);
        await victim.kill('SIGKILL');
        for (const c of victim.captured) everCaptured.add(c);
        // Printed so far and not logged as spooled by the dead process: on the wire at the kill.
        for (const s of sent) if (!everCaptured.has(s)) onWire.add(s);
        await startBridge();
      })();
    }
  }
  await killing;
  await untilDelivered(bridge!, sent, spool, (id) => everCaptured.has(id) || bridge!.captured.has(id) || onWire.has(id));
  await stopAll(bridge, server);
  const stored = await countStored(dataDir, 'FK');
  const summary = summarize(`bridge SIGKILLed ${kills} times`, sent, stored, onWire, `${stored.fragments} cut slip(s) kept as unparsed text`);
  expect(summary.lostIds).toEqual([]);
  expect(summary.duplicateIds).toEqual([]);
});
