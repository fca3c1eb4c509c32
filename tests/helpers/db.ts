import { randomUUID } from 'node:crypto';
import pg from 'pg';
import { inject } from 'vitest';
import { openDatabase, openServerDatabase, installDatabase, type Database } from '@/db/client';
import { seedDemoClinic } from '@/db/seed';

/**
 * A fresh database with the committed migrations applied, installed as the process's database:
 * in-memory PGlite, or in the PostgreSQL pass (tests/helpers/postgres-setup.ts) a new database on the
 * test server copied from the migrated template.
 */
export async function freshDatabase(): Promise<Database> {
  const server = inject('postgres');
  const database = server ? await serverDatabase(server.adminUrl, server.template) : await openDatabase();
  installDatabase(database);
  return database;
}

async function serverDatabase(adminUrl: string, template: string): Promise<Database> {
  const name = `test_${randomUUID().replaceAll('-', '')}`;
  const admin = new pg.Client({ connectionString: adminUrl });
  await admin.connect();
  try {
    await admin.query(`create database ${name} template ${template}`);
  } finally {
    await admin.end();
  }
  const url = new URL(adminUrl);
  url.pathname = `/${name}`;
  return openServerDatabase(url.toString(), { poolSize: 5 });
}

/** A fresh database holding the demo clinic. */
export async function seededDatabase() {
  const database = await freshDatabase();
  const seed = await seedDemoClinic(database.db);
  return { database, ...seed };
}
