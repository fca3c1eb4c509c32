// What a durable pass syncs. The rule checked is PostgreSQL's own with fsync on (PostgreSQL manual,
// "WAL Configuration": at commit the WAL is flushed; data files are flushed at a checkpoint, whose
// record pg_control then points to): a pass after a commit syncs the WAL only, a pass after a
// checkpoint (pg_control rewritten) syncs every data file changed since the last full pass.
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';

const synced: string[] = [];

vi.mock('node:fs/promises', async (importOriginal) => {
  const actual = await importOriginal<typeof import('node:fs/promises')>();
  const open: typeof actual.open = async (file, flags, mode) => {
    const handle = await actual.open(file, flags, mode);
    const sync = handle.sync.bind(handle);
    handle.sync = async () => {
      synced.push(String(file));
      return sync();
    };
    return handle;
  };
  return { ...actual, open, default: { ...actual, open } };
});

const { durableSyncer } = await import('@/lib/durable-sync');

let root: string;
const file = (...parts: string[]) => path.join(root, ...parts);
const write = (name: string, text: string) => {
  fs.mkdirSync(path.dirname(file(name)), { recursive: true });
  fs.writeFileSync(file(name), text);
};
const relative = () => synced.map((f) => path.relative(root, f) || '.').sort();

beforeEach(() => {
  root = fs.mkdtempSync(path.join(os.tmpdir(), 'benchwire-durable-unit-'));
  write('global/pg_control', 'checkpoint 1');
  write('pg_wal/000000010000000000000001', 'wal');
  write('base/5/16384', 'heap page');
  synced.length = 0;
});
afterEach(() => fs.rmSync(root, { recursive: true, force: true }));

describe('durableSyncer', () => {
  it('syncs everything on its first pass (what earlier runs left in the page cache)', async () => {
    await durableSyncer(root)();
    expect(relative()).toEqual(expect.arrayContaining(['base/5/16384', 'global/pg_control', 'pg_wal/000000010000000000000001', 'pg_wal', 'base', '.']));
  });

  it('after a commit syncs the WAL and not the data files a backend wrote meanwhile', async () => {
    const durable = durableSyncer(root);
    await durable();
    synced.length = 0;
    write('pg_wal/000000010000000000000001', 'wal + commit record');
    write('base/5/16384', 'heap page evicted from the buffer cache');
    await durable();
    expect(relative()).toContain('pg_wal/000000010000000000000001');
    expect(relative().filter((f) => !f.startsWith('pg_wal'))).toEqual([]);
  });

  it('after a checkpoint (pg_control rewritten) syncs the data files changed since the last full pass', async () => {
    const durable = durableSyncer(root);
    await durable();
    write('base/5/16384', 'written before the checkpoint');
    await durable(); // a commit's pass: WAL only
    synced.length = 0;
    write('global/pg_control', 'checkpoint 2');
    write('pg_wal/000000010000000000000002', 'recycled segment');
    await durable();
    expect(relative()).toEqual(expect.arrayContaining(['base/5/16384', 'global/pg_control', 'pg_wal/000000010000000000000002', 'pg_wal']));
    // And the pass after it is a commit's pass again.
    synced.length = 0;
    await durable();
    expect(relative().filter((f) => !f.startsWith('pg_wal'))).toEqual([]);
  });

  it('syncs everything every pass where there is no pg_control (not a PostgreSQL data directory)', async () => {
    fs.rmSync(file('global/pg_control'));
    const durable = durableSyncer(root);
    await durable();
    synced.length = 0;
    write('base/5/16384', 'changed');
    await durable();
    expect(relative()).toContain('base/5/16384');
  });
});
