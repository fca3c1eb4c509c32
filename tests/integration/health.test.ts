import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { body } from './support';
import { GET as health } from '@/app/api/health/route';
import { installDatabase, openDatabase, type Database } from '@/db/client';
import { freshDatabase } from '../helpers/db';
import { request } from '../helpers/http';

let database: Database;
beforeAll(async () => {
  database = await freshDatabase();
});
afterAll(() => vi.restoreAllMocks());

describe('GET /api/health', () => {
  it('is 200 JSON with status ok, the version and a reachable database, without signing in', async () => {
    const response = await health(request('/api/health'), undefined);
    expect(response.status).toBe(200);
    expect(response.headers.get('content-type')).toMatch(/^application\/json/);
    const json = await body(response);
    expect(json).toMatchObject({ status: 'ok', database: { reachable: true } });
    // SemVer 2.0.0 §2 (MAJOR.MINOR.PATCH), optionally with pre-release/build.
    expect(json.version).toMatch(/^\d+\.\d+\.\d+([-+].+)?$/);
    expect(typeof json.database.latencyMs).toBe('number');
  });

  it('is 503 degraded when the database cannot be reached', async () => {
    const closed = await openDatabase();
    await closed.close();
    installDatabase(closed);
    const logged = vi.spyOn(console, 'error').mockImplementation(() => {});
    try {
      const response = await health(request('/api/health'), undefined);
      expect(response.status).toBe(503); // RFC 9110 §15.6.4 Service Unavailable
      expect(await body(response)).toMatchObject({ status: 'degraded', database: { reachable: false } });
      expect(logged).toHaveBeenCalled();
    } finally {
      installDatabase(database);
    }
  });
});
