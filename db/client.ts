import 'server-only';
import fs from 'node:fs';
import path from 'node:path';
import { PGlite } from '@electric-sql/pglite';
import { pg_trgm } from '@electric-sql/pglite/contrib/pg_trgm';
import { drizzle, type PgliteDatabase } from 'drizzle-orm/pglite';
import { migrate } from 'drizzle-orm/pglite/migrator';
import * as schema from './schema';
import { dataDir } from '@/lib/config';
import { lockStore, tightenPermissions } from '@/lib/store-lock';

export type Db = PgliteDatabase<typeof schema>;
export type Tx = Parameters<Parameters<Db['transaction']>[0]>[0];
/** Anything that runs queries: the database or an open transaction. */
export type Executor = Db | Tx;

export interface Database {
  db: Db;
  /** LISTEN on a channel; resolves to an unsubscribe function. */
  listen(channel: string, onPayload: (payload: string) => void): Promise<() => Promise<void>>;
  close(): Promise<void>;
}

const MIGRATIONS = path.join(/*turbopackIgnore: true*/ process.cwd(), 'db', 'migrations');

/**
 * Opens embedded PostgreSQL (PGlite) at dir, or in memory when dir is undefined, and applies
 * the committed migrations. PGlite allows one process per data directory.
 */
export async function openDatabase(dir?: string): Promise<Database> {
  if (dir) fs.mkdirSync(dir, { recursive: true, mode: 0o700 });
  // pg_trgm: substring search (patient names, record numbers, owners) through trigram indexes.
  const pg = await PGlite.create(dir, { extensions: { pg_trgm } });
  const db = drizzle({ client: pg, schema, casing: 'snake_case' });
  await migrate(db, { migrationsFolder: MIGRATIONS });
  return {
    db,
    listen: (channel, onPayload) => pg.listen(channel, onPayload),
    close: () => pg.close(),
  };
}

/**
 * The server's store: DATA_DIR locked for this process first (a second server on the same directory
 * refuses to start, naming the holder), made owner-only, then the database in it opened.
 */
export async function openDataDir(dir: string = dataDir()): Promise<Database> {
  // Everything this process creates from here on is owner-only (0700 directories, 0600 files).
  process.umask(0o077);
  const release = lockStore(dir, 'the Benchwire server');
  try {
    tightenPermissions(dir);
    const database = await openDatabase(path.join(dir, 'pgdata'));
    // PGlite's file layer creates files 0666 whatever the umask. DATA_DIR itself is 0700, so nobody else
    // can reach them; the files are still brought back to 0600 after opening and every minute after.
    tightenPermissions(dir);
    const tighten = setInterval(() => {
      try {
        tightenPermissions(dir);
      } catch {
        // a file removed while walking (WAL recycling): the next pass gets the rest
      }
    }, 60_000);
    tighten.unref();
    return {
      ...database,
      close: async () => {
        clearInterval(tighten);
        try {
          await database.close();
        } finally {
          release();
        }
      },
    };
  } catch (error) {
    release();
    throw error;
  }
}

// One database per process, shared by server.ts and Next's route bundles (which load their own
// copies of this module): a process-wide symbol holds it.
const KEY = Symbol.for('benchwire.database');
type Holder = { [KEY]?: Promise<Database> };
const holder = globalThis as Holder;

export function getDatabase(): Promise<Database> {
  holder[KEY] ??= openDataDir();
  return holder[KEY];
}

/** For tests and start-up: install an already opened database as the process's one. */
export function installDatabase(database: Database): void {
  holder[KEY] = Promise.resolve(database);
}

export async function db(): Promise<Db> {
  return (await getDatabase()).db;
}

export { schema };
