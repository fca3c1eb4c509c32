import { access, open, rename } from 'node:fs/promises';
import { dirname } from 'node:path';

// Durability helpers: data counts as written only once it has been fsynced.

/** fsync a directory so a created or renamed entry in it survives a power cut. */
export async function syncDirectory(dir: string): Promise<void> {
  // Windows cannot open a directory for fsync; NTFS journals the rename itself.
  if (process.platform === 'win32') return;
  const handle = await open(dir, 'r');
  try {
    await handle.sync();
  } finally {
    await handle.close();
  }
}

/** Replace a file in one step: write a temp file, fsync it, rename it over the old one, fsync the directory. */
export async function writeFileAtomically(path: string, data: string | Buffer): Promise<void> {
  const temp = `${path}.tmp`;
  const handle = await open(temp, 'w', 0o600);
  try {
    await handle.writeFile(data);
    await handle.sync();
  } finally {
    await handle.close();
  }
  await rename(temp, path);
  await syncDirectory(dirname(path));
}

/** Append and fsync; the file is created if missing. */
export async function appendDurably(path: string, data: string | Buffer): Promise<void> {
  const existed = await access(path).then(
    () => true,
    () => false,
  );
  const handle = await open(path, 'a', 0o600);
  try {
    await handle.appendFile(data);
    await handle.sync();
  } finally {
    await handle.close();
  }
  if (!existed) await syncDirectory(dirname(path));
}
