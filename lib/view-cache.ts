import 'server-only';
import { inArray } from 'drizzle-orm';
import { db } from '@/db/client';
import { recordVersions } from '@/db/schema';

// A long chart or the Review list is worked out again (its queries, every result's evaluation, the JSON)
// only when something it reads has changed. What changed is told by the database itself: triggers bump a
// version per scope on every write to the tables those views read (migration 0023), so no code path can
// forget to invalidate, and every app instance sharing one PostgreSQL sees the same versions.
// tests/integration/view-cache.test.ts checks that each table a cached view reads carries such a trigger.

/** Kept views in all; the least recently served go first. */
const MAX_BYTES = 16 * 1024 * 1024;

interface Kept {
  versions: string;
  body: string;
  bytes: number;
}

type Store = { kept: Map<string, Kept>; bytes: number };

/** Per database (tests open several in one process), each with its kept views and their size. */
const stores = new WeakMap<object, Store>();

function storeFor(database: object): Store {
  let store = stores.get(database);
  if (!store) stores.set(database, (store = { kept: new Map(), bytes: 0 }));
  return store;
}

function forget(store: Store, key: string) {
  const old = store.kept.get(key);
  if (!old) return;
  store.kept.delete(key);
  store.bytes -= old.bytes;
}

/** The kept view, or a fresh one when a scope's version moved since it was kept. */
async function keptView(key: string, scopes: string[], compute: () => Promise<unknown>): Promise<Kept> {
  const database = await db();
  const rows = await database.select().from(recordVersions).where(inArray(recordVersions.scope, scopes));
  const versions = scopes.map((scope) => `${scope}=${rows.find((r) => r.scope === scope)?.version ?? 0}`).join(',');
  const store = storeFor(database);
  const entry = store.kept.get(key);
  if (entry && entry.versions === versions) {
    // Most recently served last (a Map keeps insertion order).
    store.kept.delete(key);
    store.kept.set(key, entry);
    return entry;
  }
  const body = JSON.stringify(await compute());
  forget(store, key);
  // Two bytes a character: the JSON holds typographic characters (−, ’), so V8 keeps it as a two-byte string.
  const fresh: Kept = { versions, body, bytes: body.length * 2 };
  if (fresh.bytes <= MAX_BYTES / 4) {
    store.kept.set(key, fresh);
    store.bytes += fresh.bytes;
    for (const oldest of store.kept.keys()) {
      if (store.bytes <= MAX_BYTES) break;
      forget(store, oldest);
    }
  }
  return fresh;
}

/**
 * The view as a JSON answer: the kept one while the versions of `scopes` are what they were when it was
 * worked out, else `compute()` again. The versions are read before computing, so a write committed
 * meanwhile leaves the kept answer under versions already out of date (worked out again next time), never
 * the reverse. (Next gzips it: a route's own Content-Encoding is dropped, so it cannot be kept gzipped.)
 */
export async function cachedViewResponse(key: string, scopes: string[], compute: () => Promise<unknown>): Promise<Response> {
  const view = await keptView(key, scopes, compute);
  return new Response(view.body, { headers: { 'content-type': 'application/json' } });
}
