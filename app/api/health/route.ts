import { sql } from 'drizzle-orm';
import { db } from '@/db/client';
import { APP_VERSION } from '@/lib/config';
import { apiRoute, json } from '@/lib/http';

export const dynamic = 'force-dynamic';

export const GET = apiRoute(async () => {
  const started = Date.now();
  try {
    const database = await db();
    await database.execute(sql`select 1`);
    return json({ status: 'ok', version: APP_VERSION, database: { reachable: true, latencyMs: Date.now() - started } });
  } catch (error) {
    console.error('[benchwire] health check: database unreachable', error);
    return json(
      { status: 'degraded', version: APP_VERSION, database: { reachable: false } },
      { status: 503 },
    );
  }
});
