import fs from 'node:fs';
import path from 'node:path';
import { afterAll, expect, inject, it } from 'vitest';
import { removeTempDirs, untilDelivered, BridgeProcess, Proxy, SerialLink, ServerProcess, countStored, dataDirFrom, sampleIdOf, scaled, slip, stopAll, summarize, tempDir } from './harness';

// A poison record: one the server keeps answering with a 500 (played by the proxy in front of the real
// server, as a server bug would answer; its health check still answers). The uploader finds it by
// halving the batch, quarantines it after bounded refusals (rejected.jsonl, a loud log line), and every
// record behind it flows.
let server: ServerProcess | undefined;
let bridge: BridgeProcess | undefined;
let link: SerialLink | undefined;
let proxy: Proxy | undefined;
afterAll(async () => {
  await stopAll(bridge, link, proxy, server);
  removeTempDirs();
});

const POISON = 'FQ-000001';
const ERROR_500 = (() => {
  const body = JSON.stringify({ error: { code: 'internal', message: 'Something went wrong on the server.', issues: [] } });
  return `HTTP/1.1 500 Internal Server Error\r\ncontent-type: application/json\r\ncontent-length: ${body.length}\r\nconnection: keep-alive\r\n\r\n${body}`;
})();

it('a poison record is quarantined and the records behind it flow', async () => {
  const { dataDir, token } = dataDirFrom(inject('faultsTemplate'), 'poison');
  const work = tempDir('poison-work');
  const spool = path.join(work, 'spool');
  server = await ServerProcess.start(dataDir);
  proxy = await new Proxy().listen(server.port);
  proxy.intercept = (request) => (request.startsWith('POST /api/bridge/readings') && request.includes(POISON) ? ERROR_500 : undefined);
  link = new SerialLink(work);
  await link.plugIn();
  const b = (bridge = BridgeProcess.spawn({ server: proxy.url, token, spool, device: link.device }));
  await b.untilReading();

  const count = scaled(100, 10);
  const sent: string[] = [];
  for (let seq = 1; seq <= count; seq++) {
    if (seq === Math.ceil(count / 3)) await link.print(slip(POISON, 0));
    const id = sampleIdOf('FP', seq);
    await link.print(slip(id, seq));
    sent.push(id);
  }
  await untilDelivered(b, [...sent, POISON], spool);
  expect(b.output).toMatch(/QUARANTINED record [0-9a-f-]+ from crp-reader/);
  const rejected = fs.readFileSync(path.join(spool, 'rejected.jsonl'), 'utf8').trim().split('\n').map((line) => JSON.parse(line));
  expect(rejected.map((r) => r.record.payload.sampleId)).toEqual([POISON]);
  await stopAll(bridge, server);
  const poisonStored = (await countStored(dataDir, 'FQ')).perSample.size;
  const summary = summarize('poison record (HTTP 500 every time)', sent, await countStored(dataDir, 'FP'), undefined, `quarantined ${rejected.length}, the poison stored ${poisonStored} time(s)`);
  expect(poisonStored).toBe(0);
  expect(summary.lostIds).toEqual([]);
  expect(summary.duplicateIds).toEqual([]);
  expect(summary.stored).toBe(count);
});
