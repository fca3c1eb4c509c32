import 'server-only';
import fs from 'node:fs/promises';
import path from 'node:path';

// Why this exists: PGlite 0.5 on a data directory never fsyncs. Read in its package source: it starts
// PostgreSQL with -F (fsync off), its Node file layer (Emscripten NODEFS) has no fsync operation, so
// even a PostgreSQL fsync() call is answered "done" without reaching the disk, and its syncToFs() is
// empty for that layer (relaxedDurability only decides whether that empty call is awaited). A committed
// transaction is therefore in the OS page cache only; a power cut or OS crash can lose it.
//
// So after a commit that will be acknowledged, we fsync from the host every file and directory under
// the data directory that changed since the last pass: the WAL PostgreSQL wrote at COMMIT, and whatever
// a checkpoint wrote (data files, pg_control, recycled WAL segments, their directory entries). That is
// what PostgreSQL itself would have synced with fsync on, and more (it covers checkpoints too, because
// PostgreSQL's own checkpoint-time fsyncs never happen here).

/** Files changed this long before the previous pass began are synced again: file times are coarse. */
const SLACK_MS = 1_000;
const PARALLEL = 8;

interface Entry {
  file: string;
  directory: boolean;
}

async function changedSince(root: string, since: number): Promise<Entry[]> {
  const out: Entry[] = [];
  async function walk(dir: string): Promise<void> {
    let names;
    try {
      names = await fs.readdir(dir, { withFileTypes: true });
    } catch (error) {
      if ((error as NodeJS.ErrnoException).code === 'ENOENT') return;
      throw error;
    }
    // Every entry of a directory at once: one relation file per table and index makes base/ a directory
    // of a thousand files, and one stat after another took 60–100 ms a pass.
    await Promise.all(
      names.map(async (dirent) => {
        const file = path.join(dir, dirent.name);
        if (dirent.isDirectory()) return walk(file);
        if (!dirent.isFile()) return;
        try {
          const stat = await fs.stat(file);
          if (Math.max(stat.mtimeMs, stat.ctimeMs) >= since) out.push({ file, directory: false });
        } catch (error) {
          if ((error as NodeJS.ErrnoException).code !== 'ENOENT') throw error;
        }
      }),
    );
    // A directory whose entries changed (a new WAL segment, a renamed or new relation file) needs its own fsync.
    try {
      const stat = await fs.stat(dir);
      if (Math.max(stat.mtimeMs, stat.ctimeMs) >= since) out.push({ file: dir, directory: true });
    } catch (error) {
      if ((error as NodeJS.ErrnoException).code !== 'ENOENT') throw error;
    }
  }
  await walk(root);
  return out;
}

async function fsyncEntry({ file, directory }: Entry): Promise<void> {
  let handle;
  try {
    handle = await fs.open(file, directory ? 'r' : 'r+');
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    if (code === 'ENOENT') return; // removed since the walk (WAL recycling): nothing left to lose
    // Directories cannot be opened on some systems (Windows); their metadata is journalled there.
    if (directory && (code === 'EISDIR' || code === 'EPERM' || code === 'EACCES')) return;
    throw error;
  }
  try {
    await handle.sync();
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    if (!(directory && (code === 'EINVAL' || code === 'EPERM'))) throw error;
  } finally {
    await handle.close();
  }
}

/**
 * Returns durable(): resolves once everything committed before the call is on disk. Calls that arrive
 * while a pass runs share the next pass (group commit); a failed fsync rejects, so the caller answers
 * 5xx and the bridge keeps its records.
 */
export function durableSyncer(root: string): () => Promise<void> {
  let since = 0; // the first pass syncs everything (what migrations and earlier runs left in the cache)
  let running: Promise<void> | null = null;
  let next: Promise<void> | null = null;

  async function pass(): Promise<void> {
    const started = Date.now();
    const entries = await changedSince(root, since - SLACK_MS);
    // Files first, then directories (deepest first, as listed), so a new file's name is synced after its data.
    const files = entries.filter((e) => !e.directory);
    for (let i = 0; i < files.length; i += PARALLEL) await Promise.all(files.slice(i, i + PARALLEL).map(fsyncEntry));
    for (const dir of entries.filter((e) => e.directory)) await fsyncEntry(dir);
    since = started;
  }

  function start(): Promise<void> {
    running = pass().finally(() => (running = null));
    return running;
  }

  return function durable(): Promise<void> {
    if (!running) return start();
    // The running pass may already have walked past what this caller's commit wrote: wait for the next one.
    next ??= running
      .catch(() => {})
      .then(() => {
        next = null;
        return start();
      });
    return next;
  };
}
