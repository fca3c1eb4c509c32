// Seeds the invented demo clinic into an empty database in DATA_DIR (demo use only).
import fs from 'node:fs';
import path from 'node:path';
import { getDatabase } from '@/db/client';
import { isEmpty, seedDemoClinic } from '@/db/seed';
import { dataDir } from '@/lib/config';

const database = await getDatabase();
if (await isEmpty(database.db)) {
  const { bridgeToken } = await seedDemoClinic(database.db);
  fs.writeFileSync(path.join(dataDir(), 'demo-bridge-token'), bridgeToken, { mode: 0o600 });
  console.log('[seed] demo clinic created');
} else {
  console.log('[seed] the database already holds a clinic; nothing seeded');
}
await database.close();
