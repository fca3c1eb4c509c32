import { openDatabase, installDatabase, type Database } from '@/db/client';
import { seedDemoClinic } from '@/db/seed';

/** A fresh in-memory PGlite with the committed migrations applied, installed as the process's database. */
export async function freshDatabase(): Promise<Database> {
  const database = await openDatabase();
  installDatabase(database);
  return database;
}

/** A fresh database holding the demo clinic. */
export async function seededDatabase() {
  const database = await freshDatabase();
  const seed = await seedDemoClinic(database.db);
  return { database, ...seed };
}
