// One owner per store (issue: two servers on one DATA_DIR both acknowledged readings, then only one's
// survived; two bridges on one spool multiplied rows). Real processes, real PGlite and spool files.
import { spawn, type ChildProcess } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { LOCK_FILE, StoreLockedError, lockStore } from '@/lib/store-lock';

const children: ChildProcess[] = [];
afterAll(() => {
  for (const child of children) if (child.exitCode === null) child.kill('SIGKILL');
});

/** Starts a holder; resolves when it says the store is open, or with its exit code and stderr if it refuses. */
function hold(kind: 'data' | 'spool', dir: string) {
  // node itself with tsx as a loader (not the tsx CLI, which runs a child): SIGKILL must hit the holder.
  const child = spawn(process.execPath, ['--import', 'tsx', 'tests/helpers/hold-store.ts', kind, dir], {
    stdio: ['ignore', 'pipe', 'pipe'],
    env: { ...process.env, TSX_TSCONFIG_PATH: 'tsconfig.server.json' },
  });
  children.push(child);
  let stdout = '';
  let stderr = '';
  return new Promise<{ child: ChildProcess; open: boolean; code: number | null; stderr: string }>((resolve) => {
    child.stdout!.on('data', (chunk) => {
      stdout += chunk;
      if (stdout.includes(`open ${child.pid}`)) resolve({ child, open: true, code: null, stderr });
    });
    child.stderr!.on('data', (chunk) => (stderr += chunk));
    child.on('exit', (code) => resolve({ child, open: false, code, stderr }));
  });
}

const killed = (child: ChildProcess) =>
  new Promise<void>((resolve) => {
    child.once('exit', () => resolve());
    child.kill('SIGKILL');
  });

const tempDir = () => fs.mkdtempSync(path.join(os.tmpdir(), 'benchwire-lock-'));

describe.each(['data', 'spool'] as const)('one process per %s directory', (kind) => {
  it('a second process refuses, naming the holder; after the holder is SIGKILLed the stale lock is recovered', async () => {
    const dir = tempDir();
    const first = await hold(kind, dir);
    expect(first.open).toBe(true);

    const second = await hold(kind, dir);
    expect(second.open).toBe(false);
    expect(second.code).toBe(3);
    expect(second.stderr).toContain(`pid ${first.child.pid}`);
    expect(second.stderr).toContain(dir);

    await killed(first.child); // no chance to clean up: the lock file stays behind
    expect(fs.existsSync(path.join(dir, LOCK_FILE))).toBe(true);
    const third = await hold(kind, dir);
    expect(third.open).toBe(true);
    await killed(third.child);
  }, 120_000);
});

describe('store files are owner-only', () => {
  it('the data dir, pgdata and every file in it: directories 0700, files 0600 (even files left 0666 before)', async () => {
    const dir = tempDir();
    fs.writeFileSync(path.join(dir, 'left-over'), 'x', { mode: 0o666 });
    fs.chmodSync(path.join(dir, 'left-over'), 0o666);
    const holder = await hold('data', dir);
    expect(holder.open).toBe(true);
    await killed(holder.child);
    const loose: string[] = [];
    const walk = (entry: string) => {
      const stat = fs.lstatSync(entry);
      if (stat.isSymbolicLink()) return;
      const mode = stat.mode & 0o777;
      if (stat.isDirectory()) {
        if (mode !== 0o700) loose.push(`${entry} ${mode.toString(8)}`);
        for (const name of fs.readdirSync(entry)) walk(path.join(entry, name));
      } else if (mode & 0o077) loose.push(`${entry} ${mode.toString(8)}`);
    };
    walk(dir);
    expect(fs.readdirSync(path.join(dir, 'pgdata')).length).toBeGreaterThan(5);
    expect(loose).toEqual([]);
  }, 120_000);
});

describe('lock file semantics in one process', () => {
  it('opening a store twice in one process is refused too, and released on close', () => {
    const dir = tempDir();
    const release = lockStore(dir, 'test');
    expect(() => lockStore(dir, 'test')).toThrow(StoreLockedError);
    release();
    expect(fs.existsSync(path.join(dir, LOCK_FILE))).toBe(false);
    lockStore(dir, 'test')();
  });

  it('a lock naming a pid that no longer runs is stale and taken over', async () => {
    const dir = tempDir();
    const gone = spawn(process.execPath, ['-e', '0']);
    await new Promise((resolve) => gone.on('exit', resolve));
    fs.writeFileSync(path.join(dir, LOCK_FILE), JSON.stringify({ pid: gone.pid, host: os.hostname(), what: 'x', since: 'then' }));
    const release = lockStore(dir, 'test');
    expect(JSON.parse(fs.readFileSync(path.join(dir, LOCK_FILE), 'utf8')).pid).toBe(process.pid);
    release();
  });

  it('a lock naming a killed process nobody has reaped yet (a zombie) is stale and taken over', async () => {
    if (process.platform !== 'linux') return;
    const dir = tempDir();
    // sh starts a short sleep in the background, then becomes `sleep`, which never waits for it: a zombie.
    const parent = spawn('sh', ['-c', 'sleep 0.1 & echo $!; exec sleep 30'], { stdio: ['ignore', 'pipe', 'ignore'] });
    children.push(parent);
    const pid = Number(await new Promise<string>((resolve) => parent.stdout!.once('data', (d) => resolve(String(d).trim()))));
    const stateOf = () => fs.readFileSync(`/proc/${pid}/stat`, 'utf8').split(') ')[1]?.[0];
    for (let i = 0; i < 200 && stateOf() !== 'Z'; i++) await new Promise((r) => setTimeout(r, 10));
    // proc(5): field 3 of /proc/<pid>/stat is the state, Z for a zombie.
    expect(stateOf()).toBe('Z');
    const start = fs.readFileSync(`/proc/${pid}/stat`, 'utf8').split(') ')[1].split(' ')[19];
    fs.writeFileSync(path.join(dir, LOCK_FILE), JSON.stringify({ pid, host: os.hostname(), what: 'x', since: 'then', processStart: start }));
    const release = lockStore(dir, 'test');
    expect(JSON.parse(fs.readFileSync(path.join(dir, LOCK_FILE), 'utf8')).pid).toBe(process.pid);
    release();
    parent.kill('SIGKILL');
  });

  it('a lock held on another host is never taken over on a guess', () => {
    const dir = tempDir();
    fs.writeFileSync(path.join(dir, LOCK_FILE), JSON.stringify({ pid: 1, host: 'another-pc', what: 'x', since: 'then' }));
    expect(() => lockStore(dir, 'test')).toThrow(/pid 1 on another-pc/);
  });
});
