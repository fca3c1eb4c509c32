// Run under strace by tests/integration/durable-ack.test.ts: opens a real data directory as the server
// does, then (1) commits a plain statement through PGlite and (2) posts a bridge batch through the real
// route, printing a marker line before and after each, so the trace shows which fsyncs came in between.
import fs from 'node:fs';
import { sql } from 'drizzle-orm';
import { POST as ingestRoute } from '@/app/api/bridge/readings/route';
import { installDatabase, openDataDir } from '@/db/client';
import { DEMO_CRP_INSTRUMENT, seedDemoClinic } from '@/db/seed';

const mark = (text: string) => fs.writeSync(1, `${text}\n`);
const dir = process.argv[2];
const database = await openDataDir(dir);
installDatabase(database);
const { bridgeToken } = await seedDemoClinic(database.db);
await database.db.execute(sql`create table durability_probe (n int)`);

mark('RAW-START');
await database.db.execute(sql`insert into durability_probe values (1)`);
mark('RAW-END');

const key = crypto.randomUUID();
const body = {
  records: [
    {
      key,
      instrument: DEMO_CRP_INSTRUMENT,
      receivedAt: new Date().toISOString(),
      payload: { kind: 'reading', analyte: 'cCRP', value: 42.5, unit: 'mg/L', raw: 'RESULT 42.5 mg/L\n' },
    },
  ],
};
mark('BATCH-START');
const response = await ingestRoute(
  new Request('http://benchwire.test/api/bridge/readings', {
    method: 'POST',
    headers: { authorization: `Bearer ${bridgeToken}`, 'content-type': 'application/json' },
    body: JSON.stringify(body),
  }),
  undefined,
);
mark(`ANSWERED ${response.status} ${JSON.stringify(await response.json())}`);
await database.close();
