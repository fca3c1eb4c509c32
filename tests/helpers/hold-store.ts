// Test helper process: opens a store the way the server or the bridge does, says so on stdout, and
// keeps it open until killed. `hold-store.ts data DIR` (the server's DATA_DIR) or `hold-store.ts spool DIR`.
import { openDataDir } from '@/db/client';
import { Spool } from '@/bridge/spool';

const [kind, dir] = process.argv.slice(2);
try {
  if (kind === 'data') await openDataDir(dir);
  else await Spool.open(dir);
  console.log(`open ${process.pid}`);
  setInterval(() => {}, 60_000);
} catch (error) {
  console.error(error instanceof Error ? error.message : String(error));
  process.exit(3);
}
