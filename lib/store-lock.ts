// One owner per store: an exclusive lock file in a directory (the server's DATA_DIR, each bridge spool),
// taken before the store inside is opened. Shared by the server and the bridge, so no server-only imports.
//
// The lock is a file created with link(2), which either creates the whole, already written file or fails
// with EEXIST: there is never a half-written lock. It names the holder (pid, host, process start time). A
// lock whose holder is gone (killed, machine rebooted) is stale and is taken over under a second,
// short-lived guard directory so two processes recovering at once cannot both win.
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { randomBytes } from 'node:crypto';

export const LOCK_FILE = 'benchwire.lock';

export interface LockHolder {
  pid: number;
  host: string;
  /** What holds it, for the message: "the Benchwire server", "a bridge". */
  what: string;
  since: string;
  /** Linux: the process start time from /proc/<pid>/stat, so a reused pid is not mistaken for the holder. */
  processStart?: string;
}

export class StoreLockedError extends Error {
  constructor(
    readonly dir: string,
    readonly holder: LockHolder,
  ) {
    super(
      `${dir} is in use by ${holder.what} (pid ${holder.pid} on ${holder.host}, since ${holder.since}). ` +
        'Only one process may open it: stop that process first, or give this one its own directory. ' +
        `If that process is certainly gone, delete ${path.join(dir, LOCK_FILE)}.`,
    );
    this.name = 'StoreLockedError';
  }
}

function processStart(pid: number): string | undefined {
  try {
    const stat = fs.readFileSync(`/proc/${pid}/stat`, 'utf8');
    // Field 22 (starttime), counted after the command name in parentheses, which may itself hold spaces.
    return stat.slice(stat.lastIndexOf(')') + 2).split(' ')[19];
  } catch {
    return undefined;
  }
}

/**
 * Linux: a killed process whose parent has not reaped it yet (a container without an init, a shell
 * that never waits) still answers kill(pid, 0), as a zombie. It holds nothing: it is gone.
 */
function zombie(pid: number): boolean {
  try {
    const stat = fs.readFileSync(`/proc/${pid}/stat`, 'utf8');
    const state = stat.slice(stat.lastIndexOf(')') + 2, stat.lastIndexOf(')') + 3);
    return state === 'Z' || state === 'X';
  } catch {
    return false;
  }
}

function processAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
  } catch (error) {
    return (error as NodeJS.ErrnoException).code === 'EPERM';
  }
  return !zombie(pid);
}

/** Is the named holder still running? Unknown (another host) counts as running: never steal on a guess. */
function holderAlive(holder: LockHolder): boolean {
  if (holder.host !== os.hostname()) return true;
  // Our own pid: ours only if this process took it (a container restarts as the same pid 1).
  if (holder.pid === process.pid) return held.has(holder.since);
  if (!processAlive(holder.pid)) return false;
  const start = processStart(holder.pid);
  return !(holder.processStart && start && holder.processStart !== start);
}

function readHolder(file: string): { text: string; holder: LockHolder | null } | null {
  let text: string;
  try {
    text = fs.readFileSync(file, 'utf8');
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code === 'ENOENT') return null;
    throw error;
  }
  try {
    const holder = JSON.parse(text) as LockHolder;
    return { text, holder: Number.isInteger(holder.pid) ? holder : null };
  } catch {
    return { text, holder: null };
  }
}

// Locks this process holds, by their `since` stamp (unique per lock taken), for release at exit.
const held = new Map<string, string>();
let exitHook = false;

/** Owner-only permissions for a store directory and everything already in it (older releases left 0666 files). */
export function tightenPermissions(dir: string): void {
  if (process.platform === 'win32') return;
  const walk = (entry: string) => {
    const stat = fs.lstatSync(entry, { throwIfNoEntry: false });
    if (!stat || stat.isSymbolicLink()) return;
    if (stat.isDirectory()) {
      if ((stat.mode & 0o777) !== 0o700) fs.chmodSync(entry, 0o700);
      for (const name of fs.readdirSync(entry)) walk(path.join(entry, name));
    } else if (stat.mode & 0o077) {
      fs.chmodSync(entry, stat.mode & 0o700);
    }
  };
  walk(dir);
}

/**
 * Takes the store lock on dir (created 0700 if missing) or throws StoreLockedError naming the holder.
 * Returns the release function; the lock is also released when the process exits.
 */
export function lockStore(dir: string, what: string): () => void {
  fs.mkdirSync(dir, { recursive: true, mode: 0o700 });
  const file = path.join(dir, LOCK_FILE);
  const since = `${new Date().toISOString()}#${randomBytes(4).toString('hex')}`;
  const me: LockHolder = { pid: process.pid, host: os.hostname(), what, since, processStart: processStart(process.pid) };
  const text = JSON.stringify(me);
  const temp = `${file}.${process.pid}.${randomBytes(4).toString('hex')}.tmp`;
  const fd = fs.openSync(temp, 'wx', 0o600);
  try {
    fs.writeSync(fd, text);
    fs.fsyncSync(fd);
  } finally {
    fs.closeSync(fd);
  }
  try {
    for (let attempt = 0; ; attempt++) {
      try {
        fs.linkSync(temp, file);
        break;
      } catch (error) {
        if ((error as NodeJS.ErrnoException).code !== 'EEXIST' || attempt >= 5) throw error;
      }
      const current = readHolder(file);
      if (!current) continue; // released meanwhile: try again
      if (current.holder && holderAlive(current.holder)) throw new StoreLockedError(dir, current.holder);
      recoverStale(file, current.text);
    }
  } finally {
    fs.rmSync(temp, { force: true });
  }
  held.set(since, file);
  if (!exitHook) {
    exitHook = true;
    process.on('exit', () => {
      for (const [stamp] of held) release(stamp);
    });
  }
  return () => release(since);
}

function release(since: string): void {
  const file = held.get(since);
  if (!file) return;
  held.delete(since);
  const current = readHolder(file);
  if (current?.holder?.since === since) fs.rmSync(file, { force: true });
}

/** Removes a stale lock, but only if it is still the very lock judged stale (another recoverer may have won). */
function recoverStale(file: string, staleText: string): void {
  const guard = `${file}.recovering`;
  try {
    fs.mkdirSync(guard);
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code !== 'EEXIST') throw error;
    // A recoverer killed mid-way leaves its guard: it only ever lives for a few milliseconds.
    const stat = fs.statSync(guard, { throwIfNoEntry: false });
    if (stat && Date.now() - stat.mtimeMs > 10_000) fs.rmSync(guard, { recursive: true, force: true });
    else Atomics.wait(new Int32Array(new SharedArrayBuffer(4)), 0, 0, 50);
    return;
  }
  try {
    const current = readHolder(file);
    if (current && current.text === staleText) fs.rmSync(file, { force: true });
  } finally {
    fs.rmSync(guard, { recursive: true, force: true });
  }
}
