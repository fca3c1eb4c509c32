import { afterEach, beforeEach } from 'vitest';
import { Spool } from '../spool';
import { tempDir } from './payloads';

/** A fresh spool in a fresh temp directory for each test of the file; read them through the getters. */
export function tempSpoolPerTest(): { readonly dir: string; readonly spool: Spool } {
  let dir = '';
  let spool: Spool | undefined;
  let cleanup: () => Promise<void> = async () => {};
  beforeEach(async () => {
    ({ dir, cleanup } = await tempDir());
    spool = await Spool.open(dir);
  });
  afterEach(async () => {
    await spool?.close();
    await cleanup();
  });
  return {
    get dir() {
      return dir;
    },
    get spool() {
      if (!spool) throw new Error('the spool exists only inside a test');
      return spool;
    },
  };
}
