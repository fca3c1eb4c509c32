import 'server-only';
import fs from 'node:fs/promises';
import path from 'node:path';

// Why this exists: PGlite 0.5 on a data directory never fsyncs. Read in its package source: it starts
// PostgreSQL with -F (fsync off), its Node file layer (Emscripten NODEFS) has no fsync operation, so
// even a PostgreSQL fsync() call is answered "done" without reaching the disk, and its syncToFs() is
// empty for that layer (relaxedDurability only decides whether that empty call is awaited). A committed
// transaction is therefore in the OS page cache only; a power cut or OS crash can lose it.
//
// So after a commit that will be acknowledged, we fsync from the host what PostgreSQL itself would have
// synced with fsync on (PostgreSQL manual, "WAL Configuration" and the fsync setting): at COMMIT only the
// WAL, so a pass stats and syncs pg_wal alone; data files are synced at a checkpoint, so when pg_control
// (rewritten by every checkpoint) differs from what the last full pass saw, the pass syncs every file
// and directory changed since that full pass (data files, pg_control, recycled WAL segments, their
// directory entries). Walking all of base/ on every commit (a thousand relation files) cost a 200-reading
// batch about 35 ms; the WAL alone is a handful of segments.

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

/** PostgreSQL's control file, or null where there is none (not a PostgreSQL data directory: every pass is full). */
async function readControl(root: string): Promise<Buffer | null> {
  try {
    return await fs.readFile(path.join(root, 'global', 'pg_control'));
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code === 'ENOENT') return null;
    throw error;
  }
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
  let since = 0; // the last pass began (the WAL changed since is synced)
  let sinceFull = 0; // the last full pass began; the first pass is full (what migrations and earlier runs left)
  let checkpointSeen: Buffer | null = null; // pg_control as the last full pass read it
  let running: Promise<void> | null = null;
  let next: Promise<void> | null = null;

  async function pass(): Promise<void> {
    const started = Date.now();
    // Read before the walk: a checkpoint that rewrites it during the walk makes the next pass full again.
    const control = await readControl(root);
    const full = !control || !checkpointSeen || !control.equals(checkpointSeen);
    const entries = full ? await changedSince(root, sinceFull - SLACK_MS) : await changedSince(path.join(root, 'pg_wal'), since - SLACK_MS);
    // Files first, then directories (deepest first, as listed), so a new file's name is synced after its data.
    const files = entries.filter((e) => !e.directory);
    for (let i = 0; i < files.length; i += PARALLEL) await Promise.all(files.slice(i, i + PARALLEL).map(fsyncEntry));
    for (const dir of entries.filter((e) => e.directory)) await fsyncEntry(dir);
    since = started;
    if (full) {
      sinceFull = started;
      checkpointSeen = control;
    }
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
