import 'server-only';
import { execFileSync } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import { PGlite } from '@electric-sql/pglite';
import { pg_trgm } from '@electric-sql/pglite/contrib/pg_trgm';
import { drizzle } from 'drizzle-orm/pglite';
import { migrate } from 'drizzle-orm/pglite/migrator';
import { drizzle as drizzleNodePg } from 'drizzle-orm/node-postgres';
import { migrate as migrateNodePg } from 'drizzle-orm/node-postgres/migrator';
import type { PgDatabase, PgQueryResultHKT } from 'drizzle-orm/pg-core';
import type { Assume } from 'drizzle-orm/utils';
import pg from 'pg';
import * as schema from './schema';
import { dataDir } from '@/lib/config';
import { durableSyncer } from '@/lib/durable-sync';
import { PgListener } from '@/lib/live/pg-listener';
import { lockStore, tightenPermissions } from '@/lib/store-lock';

/** What both drivers' raw execute() gives back that the app reads: the rows. */
interface Rows<T> {
  rows: T[];
}
export interface QueryRowsHKT extends PgQueryResultHKT {
  type: Rows<Assume<this['row'], Record<string, unknown>>>;
}

/** The same Drizzle code runs on embedded PGlite and on a PostgreSQL server (node-postgres). */
export type Db = PgDatabase<QueryRowsHKT, typeof schema>;
export type Tx = Parameters<Parameters<Db['transaction']>[0]>[0];
/** Anything that runs queries: the database or an open transaction. */
export type Executor = Db | Tx;

export interface Database {
  db: Db;
  /** LISTEN on a channel; resolves to an unsubscribe function. */
  listen(channel: string, onPayload: (payload: string) => void): Promise<() => Promise<void>>;
  /**
   * Resolves once every transaction committed before the call is on disk. A PostgreSQL server fsyncs its
   * WAL at COMMIT itself (fsync and synchronous_commit on, its defaults); PGlite on a data directory never
   * does, so this fsyncs its changed files (lib/durable-sync.ts). In memory there is no disk: nothing to do.
   */
  durable(): Promise<void>;
  /** 'pglite' (embedded, one process per data directory) or 'postgres' (DATABASE_URL). */
  kind: 'pglite' | 'postgres';
  close(): Promise<void>;
}

const MIGRATIONS = path.join(/*turbopackIgnore: true*/ process.cwd(), 'db', 'migrations');

/** PGlite's options here (and in the bench, which opens the data set as the server would). */
export function pgliteOptions() {
  return {
    // pg_trgm: substring search (patient names, record numbers, owners) through trigram indexes.
    extensions: { pg_trgm },
    startParams: [...PGlite.defaultStartParams, '-c', `shared_buffers=${sharedBuffers()}`],
  };
}

/**
 * Opens embedded PostgreSQL (PGlite) at dir, or in memory when dir is undefined, and applies
 * the committed migrations. PGlite allows one process per data directory (openDataDir locks it).
 */
export async function openDatabase(dir?: string): Promise<Database> {
  if (dir) {
    fs.mkdirSync(dir, { recursive: true, mode: 0o700 });
    initDataDirApart(dir);
  }
  const pg = await PGlite.create(dir, pgliteOptions());
  const db = drizzle({ client: pg, schema, casing: 'snake_case' });
  await migrate(db, { migrationsFolder: MIGRATIONS });
  const sync = dir ? durableSyncer(dir) : null;
  // What migrations (and any earlier run) left only in the page cache goes to disk before we serve.
  await sync?.();
  return {
    db: db as unknown as Db,
    kind: 'pglite',
    listen: (channel, onPayload) => pg.listen(channel, onPayload),
    durable: () => (sync ? sync() : Promise.resolve()),
    // Closing writes a shutdown checkpoint (data files, pg_control): to disk before the process exits.
    close: async () => {
      await pg.close();
      await sync?.();
    },
  };
}

/**
 * PostgreSQL's buffer cache inside PGlite's WebAssembly memory, which is never given back to the OS.
 * Its default (128MB, from initdb) is most of an idle server's memory; the OS page cache keeps the
 * data files warm anyway. PGLITE_SHARED_BUFFERS (e.g. 128MB) trades memory for fewer page reads.
 */
function sharedBuffers(): string {
  const value = process.env.PGLITE_SHARED_BUFFERS?.trim() || '32MB';
  if (!/^\d+(kB|MB|GB)$/.test(value)) throw new Error(`PGLITE_SHARED_BUFFERS must be a size such as 32MB (got "${value}")`);
  return value;
}

/**
 * A new data directory is made (initdb) in a short-lived child process: initdb needs about 850 MB of
 * WebAssembly memory, which a process keeps until it exits, so doing it here would leave the server
 * that large for good. An existing directory (PG_VERSION present) is opened as it is.
 */
function initDataDirApart(dir: string) {
  if (fs.existsSync(path.join(dir, 'PG_VERSION'))) return;
  const script = "import { PGlite } from '@electric-sql/pglite'; const pg = await PGlite.create(process.argv[1]); await pg.close();";
  execFileSync(process.execPath, ['--input-type=module', '-e', script, dir], { cwd: process.cwd(), stdio: ['ignore', 'ignore', 'inherit'] });
}

/** Migrations on a server: one instance at a time (others starting together wait), under an advisory lock. */
const MIGRATION_LOCK = 'benchwire.migrations';

/**
 * A PostgreSQL server through node-postgres (DATABASE_URL): a connection pool for queries and one
 * dedicated connection for LISTEN, so live events reach every app instance on the same database.
 */
export async function openServerDatabase(url: string, options: { poolSize?: number } = {}): Promise<Database> {
  const pool = new pg.Pool({ connectionString: url, max: options.poolSize ?? Number(process.env.DATABASE_POOL_SIZE ?? 10) });
  // An idle connection dropped by the server (restart, admin) must not take the process down; the pool replaces it.
  pool.on('error', (error) => console.error('[benchwire] database connection lost', error.message));
  try {
    const client = await pool.connect();
    try {
      await client.query('select pg_advisory_lock(hashtext($1))', [MIGRATION_LOCK]);
      try {
        await migrateNodePg(drizzleNodePg({ client, schema, casing: 'snake_case' }), { migrationsFolder: MIGRATIONS });
      } finally {
        await client.query('select pg_advisory_unlock(hashtext($1))', [MIGRATION_LOCK]);
      }
    } finally {
      client.release();
    }
  } catch (error) {
    await pool.end().catch(() => {});
    throw error;
  }
  const db = drizzleNodePg({ client: pool, schema, casing: 'snake_case' });
  const listener = new PgListener(url);
  return {
    db: db as unknown as Db,
    kind: 'postgres',
    listen: (channel, onPayload) => listener.listen(channel, onPayload),
    // COMMIT returned: the server has flushed its WAL (synchronous_commit = on).
    durable: () => Promise.resolve(),
    close: async () => {
      await listener.close();
      await pool.end();
    },
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

/** DATABASE_URL (postgres://…) selects a PostgreSQL server; without it, PGlite in DATA_DIR. */
export function databaseUrl(): string | undefined {
  const url = process.env.DATABASE_URL?.trim();
  if (!url) return undefined;
  if (!/^postgres(ql)?:\/\//.test(url)) throw new Error('DATABASE_URL must start with postgres:// or postgresql://');
  return url;
}

export function getDatabase(): Promise<Database> {
  if (!holder[KEY]) {
    const url = databaseUrl();
    // The store lock guards PGlite's one-process data directory only; a server takes many instances.
    holder[KEY] = url ? openServerDatabase(url) : openDataDir();
  }
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
