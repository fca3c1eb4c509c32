import { EventEmitter } from 'node:events';
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { bridgeBatchSchema, bridgeHeartbeatSchema, type BridgeBatch } from '../lib/validation/readings';
import { REJECTED_FILE, Spool } from './spool';
import { when } from './testing/events';
import { reading, tempDir } from './testing/payloads';
import { freePort, keyStore, startTestServer, type Reply, type TestServer } from './testing/server';
import { Uploader, type RetryEvent, type UploadedEvent, type UploaderOptions } from './uploader';

// Expectations follow the bridge contract in lib/validation/readings.ts and the server's documented
// answers: 200 with a result per key, 400 malformed, 401 bad token, 5xx and network errors "try again".

let dir: string;
let cleanup: () => Promise<void>;
let spool: Spool;
const servers: TestServer[] = [];
const uploaders: Uploader[] = [];
const lines: string[] = [];
const logged = new EventEmitter<{ line: [string] }>();
const record = (level: string) => (message: string) => {
  lines.push(`${level} ${message}`);
  logged.emit('line', `${level} ${message}`);
};
const log = { info: record('info'), warn: record('warn'), error: record('error') };

beforeEach(async () => {
  ({ dir, cleanup } = await tempDir());
  spool = await Spool.open(dir);
  lines.length = 0;
});

afterEach(async () => {
  for (const uploader of uploaders.splice(0)) await uploader.stop();
  for (const server of servers.splice(0)) await server.close();
  await spool.close();
  await cleanup();
});

async function serve(handle: (body: BridgeBatch, path: string) => Reply | Promise<Reply>, port?: number) {
  const server = await startTestServer((request) => {
    if (request.path === '/api/bridge/heartbeat') return { status: 200, body: { ok: true } };
    if (request.path === '/api/health') return { status: 200, body: { ok: true } };
    return handle(bridgeBatchSchema.parse(request.body), request.path);
  }, port);
  servers.push(server);
  return server;
}

function upload(server: string, options: Partial<UploaderOptions> = {}) {
  const uploader = new Uploader({
    server,
    token: 'bwb_test-token',
    spool,
    log,
    retry: { initialMs: 10, maxMs: 80 },
    authRetryMs: 30,
    heartbeatMs: 60_000,
    ...options,
  });
  uploaders.push(uploader);
  return uploader;
}

const drained = (uploader: Uploader) => when<[UploadedEvent]>(uploader, 'uploaded', () => spool.depth() === 0);

async function spoolReadings(count: number) {
  const records = [];
  for (let i = 0; i < count; i++) records.push(await spool.append('crp-reader', reading(i)));
  return records;
}

describe('Uploader', () => {
  it('retries while the server refuses connections and answers 500, then acks what it confirmed', async () => {
    const records = await spoolReadings(3);
    const port = await freePort();
    const uploader = upload(`http://127.0.0.1:${port}`);
    const retries: RetryEvent[] = [];
    uploader.on('retrying', (event) => retries.push(event));
    const refused = when(uploader, 'retrying');
    uploader.start();
    await refused;
    expect(spool.depth()).toBe(3);

    const store = keyStore();
    let calls = 0;
    const done = drained(uploader);
    const server = await serve((batch) => (++calls === 1 ? { status: 500, body: { error: { message: 'database busy' } } } : { status: 200, body: store.answer(batch) }), port);
    await done;

    expect(retries[0].reason).toMatch(/^server unreachable/);
    expect(retries.some((event) => event.status === 500)).toBe(true);
    expect([...store.ids.keys()]).toEqual(records.map((record) => record.key));
    // Same keys on every try: the 500'd batch and the accepted one carry the same records.
    const uploads = server.requests.filter((r) => r.path === '/api/bridge/readings');
    const sent = uploads.map((r) => (r.body as BridgeBatch).records.map((x) => x.key));
    expect(sent).toEqual([records.map((r) => r.key), records.map((r) => r.key)]);
    // The health probe (unauthenticated) may reach the server before the first upload does.
    expect(uploads.every((r) => r.headers.authorization === 'Bearer bwb_test-token')).toBe(true);
    expect(spool.pending()).toEqual([]);
  });

  it('backs off exponentially up to the cap, with jitter', async () => {
    await spoolReadings(1);
    const port = await freePort();
    const fullJitter = upload(`http://127.0.0.1:${port}`, { random: () => 1 });
    const delays: number[] = [];
    const fifth = when<[RetryEvent]>(fullJitter, 'retrying', (event) => delays.push(event.delayMs) >= 5);
    fullJitter.start();
    await fifth;
    await fullJitter.stop();
    expect(delays.slice(0, 5)).toEqual([10, 20, 40, 80, 80]);

    const noJitter = upload(`http://127.0.0.1:${port}`, { random: () => 0 });
    const [first] = await Promise.all([when<[RetryEvent]>(noJitter, 'retrying'), noJitter.start()]);
    expect(first[0].delayMs).toBe(5);
  });

  it('acks records the server reports as duplicates', async () => {
    await spoolReadings(2);
    const server = await serve((batch) => ({ status: 200, body: { results: batch.records.map((r) => ({ key: r.key, status: 'duplicate', id: 'x' })) } }));
    const uploader = upload(server.url);
    const [event] = await Promise.all([drained(uploader), uploader.start()]);
    expect(event[0]).toMatchObject({ created: 0, duplicate: 2 });
    expect(spool.depth()).toBe(0);
  });

  it('acks only the keys in the answer and sends the rest again', async () => {
    const records = await spoolReadings(3);
    const store = keyStore();
    let calls = 0;
    const server = await serve((batch) => {
      const answer = store.answer(batch);
      // First answer leaves out the last key.
      return { status: 200, body: ++calls === 1 ? { results: answer.results.slice(0, 2) } : answer };
    });
    const uploader = upload(server.url);
    const firstAnswer = when(uploader, 'uploaded');
    uploader.start();
    await firstAnswer;
    expect(spool.pending().map((r) => r.key)).toEqual([records[2].key]);
    await drained(uploader);
    const batches = server.requests.filter((r) => r.path === '/api/bridge/readings').map((r) => (r.body as BridgeBatch).records.map((x) => x.key));
    expect(batches).toEqual([records.map((r) => r.key), [records[2].key]]);
  });

  it('keeps nothing but the confirmed: a server killed mid-request leaves every record spooled', async () => {
    const records = await spoolReadings(4);
    const store = keyStore();
    const first = await serve((batch) => {
      store.answer(batch); // stored, but the answer never gets out
      return 'hang-up';
    });
    const uploader = upload(first.url);
    const failed = when(uploader, 'retrying');
    uploader.start();
    await failed;
    await uploader.stop();
    await first.close();
    expect(spool.pending()).toEqual(records);
    await spool.close();
    spool = await Spool.open(dir);
    expect(spool.pending()).toEqual(records);

    const second = await serve((batch) => ({ status: 200, body: store.answer(batch) }), first.port);
    const again = upload(second.url);
    const [event] = await Promise.all([drained(again), again.start()]);
    expect(event[0]).toMatchObject({ created: 0, duplicate: 4 });
    expect(spool.depth()).toBe(0);
  });

  it('moves a batch the server calls malformed to rejected.jsonl and carries on', async () => {
    const [bad] = await spoolReadings(1);
    const store = keyStore();
    const message = 'records.0.payload.value: expected number';
    const server = await serve((batch) =>
      batch.records.some((r) => r.key === bad.key)
        ? { status: 400, body: { error: { code: 'invalid_body', message, issues: [{ path: ['records', 0] }] } } }
        : { status: 200, body: store.answer(batch) },
    );
    const uploader = upload(server.url);
    const [rejected] = await Promise.all([when(uploader, 'rejected'), uploader.start()]);
    expect(rejected[0]).toEqual({ status: 400, count: 1, message });
    expect(spool.depth()).toBe(0);

    const [good] = await spoolReadings(1);
    await drained(uploader);
    expect([...store.ids.keys()]).toEqual([good.key]);
    const kept = (await readFile(join(dir, REJECTED_FILE), 'utf8')).trim().split('\n').map((line) => JSON.parse(line));
    expect(kept).toEqual([{ rejectedAt: expect.any(String), status: 400, error: { code: 'invalid_body', message, issues: [{ path: ['records', 0] }] }, record: bad }]);
    expect(lines.some((line) => line.startsWith('error') && line.includes('rejected.jsonl'))).toBe(true);
  });

  it('isolates a refused record: the good ones in the same batch are stored, only the bad one is rejected', async () => {
    const records = await spoolReadings(5);
    const bad = records[2];
    const store = keyStore();
    const message = 'records.2.payload.value: expected number';
    const server = await serve((batch) =>
      batch.records.some((r) => r.key === bad.key)
        ? { status: 400, body: { error: { code: 'invalid_request', message, issues: [] } } }
        : { status: 200, body: store.answer(batch) },
    );
    const uploader = upload(server.url);
    const [rejected] = await Promise.all([when(uploader, 'rejected'), uploader.start()]);
    expect(rejected[0]).toEqual({ status: 400, count: 1, message });
    await drained(uploader);
    expect([...store.ids.keys()].sort()).toEqual(records.filter((r) => r !== bad).map((r) => r.key).sort());
    const kept = (await readFile(join(dir, REJECTED_FILE), 'utf8')).trim().split('\n').map((line) => JSON.parse(line));
    expect(kept.map((k: { record: { key: string } }) => k.record.key)).toEqual([bad.key]);
    expect(spool.depth()).toBe(0);
  });

  it('quarantines a record the server keeps answering 500 to (after bounded retries), loudly; the records behind it flow', async () => {
    const records = await spoolReadings(6);
    const poison = records[2];
    const store = keyStore();
    const server = await serve((batch) =>
      batch.records.some((r) => r.key === poison.key)
        ? { status: 500, body: { error: { code: 'internal', message: 'Something went wrong on the server.' } } }
        : { status: 200, body: store.answer(batch) },
    );
    const uploader = upload(server.url, { maxRefusals: 3, probeMs: 5, sources: () => [{ instrument: 'crp-reader', state: 'open' }] });
    const [quarantined] = await Promise.all([when(uploader, 'quarantined'), uploader.start()]);
    expect(quarantined[0]).toMatchObject({ key: poison.key, instrument: 'crp-reader', status: 500 });
    await drained(uploader);
    expect([...store.ids.keys()].sort()).toEqual(records.filter((r) => r !== poison).map((r) => r.key).sort());
    const kept = (await readFile(join(dir, REJECTED_FILE), 'utf8')).trim().split('\n').map((line) => JSON.parse(line));
    expect(kept.map((k: { record: { key: string } }) => k.record.key)).toEqual([poison.key]);
    expect(kept[0].error.code).toBe('quarantined');
    expect(lines.some((line) => line.startsWith('error upload: QUARANTINED record ' + poison.key))).toBe(true);
    // Refused alone at least maxRefusals times before it was set aside.
    const alone = server.requests.filter((r) => r.path === '/api/bridge/readings' && (r.body as BridgeBatch).records.length === 1 && (r.body as BridgeBatch).records[0].key === poison.key);
    expect(alone.length).toBeGreaterThanOrEqual(3);
    // Admins see it: the heartbeat after the quarantine carries a warning on that instrument.
    const beats = server.requests.filter((r) => r.path === '/api/bridge/heartbeat').map((r) => bridgeHeartbeatSchema.parse(r.body));
    expect(beats.at(-1)!.sources[0].warnings?.[0]).toMatch(/^1 record\(s\) quarantined/);
  });

  it('quarantines nothing while the whole server is failing (its health check fails too)', async () => {
    const records = await spoolReadings(2);
    const server = await startTestServer(() => ({ status: 503, body: { error: { message: 'starting' } } }));
    servers.push(server);
    const uploader = upload(server.url, { maxRefusals: 2, probeMs: 5 });
    let quarantined = 0;
    uploader.on('quarantined', () => quarantined++);
    let retries = 0;
    const many = when(uploader, 'retrying', () => ++retries >= 3);
    uploader.start();
    await many;
    // By now the lone first record has been refused more than maxRefusals times.
    const soloTries = () => server.requests.filter((r) => r.path === '/api/bridge/readings' && (r.body as BridgeBatch).records.length === 1).length;
    await new Promise<void>((resolve) => {
      const check = () => (soloTries() >= 4 ? resolve() : setTimeout(check, 5));
      check();
    });
    await uploader.stop();
    expect(quarantined).toBe(0);
    expect(spool.pending()).toEqual(records);
  });

  it('resumes as soon as the server answers its health check again, not after the full backoff', async () => {
    await spoolReadings(2);
    const port = await freePort();
    // A 60 s backoff: the test (30 s limit) can only pass if the health probe cuts it short.
    const uploader = upload(`http://127.0.0.1:${port}`, { retry: { initialMs: 60_000, maxMs: 60_000 }, probeMs: 20, random: () => 1 });
    const [retry] = await Promise.all([when<[RetryEvent]>(uploader, 'retrying'), uploader.start()]);
    expect(retry[0].delayMs).toBe(60_000);
    const store = keyStore();
    const done = drained(uploader);
    await serve((batch) => ({ status: 200, body: store.answer(batch) }), port);
    await done;
    expect(store.ids.size).toBe(2);
  });

  it('says clearly when the token is refused and keeps trying', async () => {
    await spoolReadings(1);
    const store = keyStore();
    let calls = 0;
    const server = await serve((batch) => (++calls <= 2 ? { status: 401, body: { error: { code: 'unauthorized', message: 'token revoked' } } } : { status: 200, body: store.answer(batch) }));
    const uploader = upload(server.url);
    const refusals: RetryEvent[] = [];
    uploader.on('unauthorized', (event) => refusals.push(event));
    await Promise.all([drained(uploader), uploader.start()]);
    expect(refusals).toEqual([
      { reason: 'token revoked', status: 401, delayMs: 30 },
      { reason: 'token revoked', status: 401, delayMs: 30 },
    ]);
    expect(lines.filter((line) => line.startsWith('error') && line.includes('refused the bridge token'))).toHaveLength(2);
  });

  it('sends at most 200 records per batch, oldest first', async () => {
    const records = await spoolReadings(450);
    const store = keyStore();
    const server = await serve((batch) => ({ status: 200, body: store.answer(batch) }));
    const uploader = upload(server.url);
    await Promise.all([drained(uploader), uploader.start()]);
    const sizes = server.requests.filter((r) => r.path === '/api/bridge/readings').map((r) => (r.body as BridgeBatch).records.length);
    expect(sizes).toEqual([200, 200, 50]);
    expect([...store.ids.keys()]).toEqual(records.map((r) => r.key));
  });

  it('keeps batches under the byte limit and halves a batch the server finds too large', async () => {
    const records = await spoolReadings(8);
    const recordBytes = Buffer.byteLength(JSON.stringify(records[0])) + 1;
    const store = keyStore();
    const server = await serve((batch) => (batch.records.length > 2 ? { status: 413, body: { error: { message: 'too large' } } } : { status: 200, body: store.answer(batch) }));
    const uploader = upload(server.url, { maxBatchBytes: 64 + 3 * recordBytes });
    await Promise.all([drained(uploader), uploader.start()]);
    const sizes = server.requests.filter((r) => r.path === '/api/bridge/readings').map((r) => (r.body as BridgeBatch).records.length);
    // Three fit the byte limit; the server refuses three, so two are tried; then three again.
    expect(sizes).toEqual([3, 2, 3, 2, 3, 2, 2]);
    expect([...store.ids.keys()]).toEqual(records.map((r) => r.key));
  });

  it('rejects a single record the server finds too large', async () => {
    const [big] = await spoolReadings(1);
    const server = await serve(() => ({ status: 413, body: { error: { code: 'payload_too_large', message: 'too large' } } }));
    const uploader = upload(server.url);
    const [rejected] = await Promise.all([when(uploader, 'rejected'), uploader.start()]);
    expect(rejected[0]).toEqual({ status: 413, count: 1, message: 'too large' });
    const kept = JSON.parse(await readFile(join(dir, REJECTED_FILE), 'utf8'));
    expect(kept.record).toEqual(big);
  });

  it('sends a heartbeat with spool depth, source states and link health', async () => {
    await spoolReadings(2);
    const server = await startTestServer(() => ({ status: 503 }));
    servers.push(server);
    const uploader = upload(server.url, {
      bridgeVersion: '0.1.0',
      sources: () => [
        { instrument: 'crp-reader', state: 'connecting', detail: 'tcp://127.0.0.1:4001' },
        { instrument: 'chem', state: 'open', warnings: ['looks like the wrong baud rate or parity (64% unreadable bytes)'], bytesReceived: 4096, lastByteAt: '2026-12-01T14:03:22+01:00' },
      ],
    });
    const [beat] = await Promise.all([when(uploader, 'heartbeat'), uploader.start()]);
    expect(beat[0]).toEqual({ ok: false, status: 503 });
    const heartbeat = server.requests.find((r) => r.path === '/api/bridge/heartbeat');
    expect(bridgeHeartbeatSchema.parse(heartbeat?.body)).toEqual({
      bridgeVersion: '0.1.0',
      spoolDepth: 2,
      sources: [
        { instrument: 'crp-reader', state: 'connecting', detail: 'tcp://127.0.0.1:4001' },
        { instrument: 'chem', state: 'open', warnings: ['looks like the wrong baud rate or parity (64% unreadable bytes)'], bytesReceived: 4096, lastByteAt: '2026-12-01T14:03:22+01:00' },
      ],
    });
  });

  it('survives a spool it cannot update: logs it and keeps the batch pending', async () => {
    await spoolReadings(1);
    const store = keyStore();
    const server = await serve(async (batch) => {
      await spool.close(); // the disk goes away between sending and hearing back
      return { status: 200, body: store.answer(batch) };
    });
    const uploader = upload(server.url);
    const spoolError = when<[string]>(logged, 'line', (line) => line.startsWith('error upload: could not update the spool'));
    uploader.start();
    await spoolError;
    await uploader.stop();
    expect(store.ids.size).toBe(1);
    const reopened = await Spool.open(dir);
    expect(reopened.depth()).toBe(1);
    await reopened.close();
  });

  it('stops while a request hangs, leaving its records pending', async () => {
    const records = await spoolReadings(2);
    let answer: (reply: Reply) => void = () => {};
    let arrived: () => void = () => {};
    const requestArrived = new Promise<void>((resolve) => (arrived = resolve));
    await serve(() => {
      arrived();
      return new Promise<Reply>((resolve) => (answer = resolve));
    }).then((server) => upload(server.url).start());
    await requestArrived;
    await uploaders[0].stop();
    answer({ status: 500 });
    expect(spool.pending()).toEqual(records);
  });
});
