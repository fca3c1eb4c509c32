// The cost of "acknowledged means on disk" on PGlite: the same 200-reading batches through ingestBatch on a
// real data directory, answered after the fsync pass (Database.durable) against answered at COMMIT (the
// baseline, what the server did before: durable only in the OS page cache).
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { eq } from 'drizzle-orm';
import { installDatabase, openDatabase } from '@/db/client';
import { bridges } from '@/db/schema';
import { seedDemoClinic } from '@/db/seed';
import { ingestBatch } from '@/lib/readings/ingest';
import { BATCH, benchBatch } from './database';
import { ms, now, percentile, type Report } from './report';

export async function benchDurability(report: Report, batches: number) {
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'benchwire-durable-bench-'));
  const database = await openDatabase(path.join(dir, 'pgdata'));
  try {
    const { clinicId } = await seedDemoClinic(database.db);
    const [bridge] = await database.db.select().from(bridges).where(eq(bridges.clinicId, clinicId)).limit(1);
    const run = async (label: string, durable: boolean) => {
      installDatabase(durable ? database : { ...database, durable: async () => {} });
      await ingestBatch(bridge, benchBatch(`${label}-warm`, 0)); // warm
      const times: number[] = [];
      for (let n = 1; n <= batches; n++) {
        const t = now();
        await ingestBatch(bridge, benchBatch(label, n));
        times.push(ms(t));
      }
      return times;
    };
    // Alternate so both see the same growing tables and the same machine load.
    const atCommit: number[] = [];
    const onDisk: number[] = [];
    for (let round = 0; round < 2; round++) {
      atCommit.push(...(await run(`commit${round}`, false)));
      onDisk.push(...(await run(`durable${round}`, true)));
    }
    const p50 = (t: number[]) => percentile(t, 50);
    const p95 = (t: number[]) => percentile(t, 95);
    report.add({ section: 'durability', name: `${BATCH}-reading batch answered on disk, p50`, value: p50(onDisk), unit: 'ms', baseline: 'answered at COMMIT (page cache only)', baselineValue: p50(atCommit) });
    report.add({ section: 'durability', name: `${BATCH}-reading batch answered on disk, p95`, value: p95(onDisk), unit: 'ms', baseline: 'answered at COMMIT (page cache only)', baselineValue: p95(atCommit) });
    const files = fs.readdirSync(path.join(dir, 'pgdata'), { recursive: true }).length;
    report.notes.push(`durability: data directory of ${files} entries walked per pass; ${batches * 2} batches each way`);
  } finally {
    await database.close();
    fs.rmSync(dir, { recursive: true, force: true });
  }
}
