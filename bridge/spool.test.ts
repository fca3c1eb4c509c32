import { appendFile, readFile, stat, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { bridgeRecordSchema } from '../lib/validation/readings';
import { ACK_FILE, CORRUPT_FILE, REJECTED_FILE, SPOOL_FILE, Spool } from './spool';
import { reading, tempDir, unparsed } from './testing/payloads';

// Durability rules are ours (common practice, no source): a record is captured once fsynced, keeps its
// key for life, and leaves the spool only when the server confirmed it or a person has it in rejected.jsonl.

let dir: string;
let cleanup: () => Promise<void>;
const open: Spool[] = [];

async function openSpool(): Promise<Spool> {
  const spool = await Spool.open(dir);
  open.push(spool);
  return spool;
}

async function reopen(spool: Spool): Promise<Spool> {
  await spool.close();
  return openSpool();
}

const keysOf = (spool: Spool) => spool.pending().map((record) => record.key);

beforeEach(async () => {
  ({ dir, cleanup } = await tempDir());
});

afterEach(async () => {
  for (const spool of open.splice(0)) await spool.close();
  await cleanup();
});

describe('Spool', () => {
  it('appends records with a fresh key, instrument and receivedAt, in order', async () => {
    const spool = await openSpool();
    const first = await spool.append('crp-reader', reading(12.5), new Date('2026-12-01T13:03:22Z'));
    const second = await spool.append('crp-reader', unparsed('** PAPER FEED **\r\n'));
    expect(bridgeRecordSchema.parse(first)).toEqual(first);
    expect(first.key).toMatch(/^[0-9a-f]{8}-[0-9a-f]{4}-4[0-9a-f]{3}-[89ab][0-9a-f]{3}-[0-9a-f]{12}$/);
    expect(first.key).not.toBe(second.key);
    expect(new Date(first.receivedAt).toISOString()).toBe('2026-12-01T13:03:22.000Z');
    expect(spool.pending()).toEqual([first, second]);
    expect(spool.pending(1)).toEqual([first]);
    expect(spool.depth()).toBe(2);
  });

  it('gives the same unconfirmed records with the same keys after a restart', async () => {
    const spool = await openSpool();
    const records = [await spool.append('crp-reader', reading(1)), await spool.append('crp-reader', reading(2))];
    const again = await reopen(spool);
    expect(again.pending()).toEqual(records);
  });

  it('keeps the ack pointer across a restart', async () => {
    const spool = await openSpool();
    const records = [];
    for (let value = 1; value <= 4; value++) records.push(await spool.append('crp-reader', reading(value)));
    expect(await spool.ack([records[0].key, records[1].key])).toBe(2);
    expect(keysOf(spool)).toEqual([records[2].key, records[3].key]);
    expect(JSON.parse(await readFile(join(dir, ACK_FILE), 'utf8'))).toEqual({ confirmedThrough: records[1].key });

    const again = await reopen(spool);
    expect(again.pending()).toEqual(records.slice(2));
  });

  it('holds confirmations out of order in memory; after a restart those records are sent again', async () => {
    const spool = await openSpool();
    const [a, b, c] = [await spool.append('x', reading(1)), await spool.append('x', reading(2)), await spool.append('x', reading(3))];
    await spool.ack([b.key]);
    expect(keysOf(spool)).toEqual([a.key, c.key]);
    expect(spool.depth()).toBe(2);
    // b is resent after a restart; the server answers 'duplicate' for a key it has.
    const again = await reopen(spool);
    expect(keysOf(again)).toEqual([a.key, b.key, c.key]);
  });

  it('ignores keys it does not hold and acks already confirmed keys only once', async () => {
    const spool = await openSpool();
    const a = await spool.append('x', reading(1));
    await spool.append('x', reading(2));
    expect(await spool.ack(['not-a-spooled-key'])).toBe(0);
    expect(await spool.ack([a.key])).toBe(1);
    expect(await spool.ack([a.key])).toBe(0);
    expect(spool.depth()).toBe(1);
  });

  it('compacts once everything is confirmed and carries on with new keys', async () => {
    const spool = await openSpool();
    const old = [await spool.append('x', reading(1)), await spool.append('x', reading(2))];
    await spool.ack(old.map((record) => record.key));
    expect((await stat(join(dir, SPOOL_FILE))).size).toBe(0);
    expect(spool.depth()).toBe(0);

    const fresh = await spool.append('x', reading(3));
    expect(old.map((record) => record.key)).not.toContain(fresh.key);
    const again = await reopen(spool);
    expect(again.pending()).toEqual([fresh]);
  });

  it('treats a pointer to a key no longer in the spool as nothing confirmed', async () => {
    const spool = await openSpool();
    const record = await spool.append('x', reading(1));
    await spool.close();
    // As after a crash between compaction and rewriting the pointer.
    await writeFile(join(dir, ACK_FILE), JSON.stringify({ confirmedThrough: '00000000-0000-4000-8000-000000000000' }));
    expect((await openSpool()).pending()).toEqual([record]);
  });

  it('resends everything when the ack pointer is unreadable', async () => {
    const spool = await openSpool();
    const records = [await spool.append('x', reading(1)), await spool.append('x', reading(2))];
    await spool.ack([records[0].key]);
    await spool.close();
    await writeFile(join(dir, ACK_FILE), '{"confirmedThro');
    expect((await openSpool()).pending()).toEqual(records);
  });

  it('moves a torn last line to spool.corrupt and keeps going', async () => {
    const spool = await openSpool();
    const records = [await spool.append('x', reading(1)), await spool.append('x', reading(2))];
    await spool.close();
    const torn = '{"key":"3f0c2b1e-aaaa-4bbb-8ccc-0123456789ab","instrument":"x","receivedAt":"2026-12-';
    await appendFile(join(dir, SPOOL_FILE), torn);

    const again = await openSpool();
    expect(again.pending()).toEqual(records);
    expect(await readFile(join(dir, CORRUPT_FILE), 'utf8')).toBe(`${torn}\n`);
    const third = await again.append('x', reading(3));

    const restarted = await reopen(again);
    expect(restarted.pending()).toEqual([...records, third]);
    // The corrupt line was moved once, not again on every start.
    expect(await readFile(join(dir, CORRUPT_FILE), 'utf8')).toBe(`${torn}\n`);
  });

  it('moves a damaged line between good ones to spool.corrupt and keeps the good ones', async () => {
    const spool = await openSpool();
    const first = await spool.append('x', reading(1));
    await appendFile(join(dir, SPOOL_FILE), 'not json at all\n');
    // The spool's own handle appends after the damage, as a later write would.
    const second = await spool.append('x', reading(2));
    const again = await reopen(spool);
    expect(again.pending()).toEqual([first, second]);
    expect(await readFile(join(dir, CORRUPT_FILE), 'utf8')).toBe('not json at all\n');
    expect((await readFile(join(dir, SPOOL_FILE), 'utf8')).split('\n').filter(Boolean)).toHaveLength(2);
  });

  it('keeps rejected records in rejected.jsonl with the server message and stops sending them', async () => {
    const spool = await openSpool();
    const [bad, good] = [await spool.append('x', reading(1)), await spool.append('x', reading(2))];
    const error = { code: 'invalid_batch', message: 'records.0.payload.unit: too long', issues: [] };
    await spool.reject([bad], { status: 400, error });
    expect(spool.pending()).toEqual([good]);

    const lines = (await readFile(join(dir, REJECTED_FILE), 'utf8')).trim().split('\n').map((line) => JSON.parse(line));
    expect(lines).toEqual([{ rejectedAt: expect.any(String), status: 400, error, record: bad }]);
    expect((await reopen(spool)).pending()).toEqual([good]);
  });

  it('keeps the order of concurrent appends', async () => {
    const spool = await openSpool();
    const records = await Promise.all(Array.from({ length: 25 }, (_, i) => spool.append('x', reading(i))));
    expect(records.map((record) => (record.payload.kind === 'reading' ? record.payload.value : -1))).toEqual(
      Array.from({ length: 25 }, (_, i) => i),
    );
    expect((await reopen(spool)).pending()).toEqual(records);
  });

  it('refuses work after close', async () => {
    const spool = await openSpool();
    await spool.close();
    await expect(spool.append('x', reading(1))).rejects.toThrow(/closed/);
  });
});
