// Applies the committed migrations to the database in DATA_DIR (the server also does this at start-up).
import { getDatabase } from '@/db/client';

const database = await getDatabase();
await database.close();
console.log('[migrate] database is up to date');
