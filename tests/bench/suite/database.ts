// In-process figures on a copy of the loaded data set: the SQL each read path runs (with EXPLAIN ANALYZE
// of its main query and the query count, which shows an N+1), and ingest through lib/readings/ingest
// against a raw multi-row INSERT of the same rows into the same database.
import { randomUUID } from 'node:crypto';
import { join } from 'node:path';
import { PGlite } from '@electric-sql/pglite';
import { sql } from 'drizzle-orm';
import { drizzle } from 'drizzle-orm/pglite';
import { migrate } from 'drizzle-orm/pglite/migrator';
import { installDatabase, pgliteOptions, schema, type Db } from '@/db/client';
import type { Bridge } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import type { BridgeBatch } from '@/lib/validation/readings';
import { HEAVY_PATIENT } from './dataset';
import { readPaths } from './paths';
import { ms, now, percentile, type Report } from './report';

export const BATCH = 200;

/** A full bridge batch of invented CRP readings; every third carries a sample ID (as the issue measured). */
export function benchBatch(prefix: string, n: number, instrument = 'crp-reader'): BridgeBatch {
  const at = new Date().toISOString();
  return {
    records: Array.from({ length: BATCH }, (_, i) => {
      const value = ((n * BATCH + i) % 900) / 10 + 0.5;
      return {
        key: `bench-${prefix}-${n}-${i}`, // the contract wants at least 8 characters
        instrument,
        receivedAt: at,
        payload: {
          kind: 'reading' as const,
          analyte: 'cCRP',
          value,
          code: null,
          text: null,
          notes: [],
          comparator: null,
          unit: 'mg/L',
          flags: [],
          sampleId: i % 3 === 0 ? `NX-${prefix}-${n}-${i}` : null,
          patientRef: null,
          measuredAt: at,
          instrumentSerial: 'SIM-0001',
          referenceRange: null,
          resultStatus: null,
          raw: `RESULT    ${value} mg/L\r\n`,
        },
      };
    }),
  };
}

interface Logged {
  sql: string;
  params: unknown[];
}

/** The raw baseline: the batch's readings as one multi-row INSERT, nothing else (no audit rows, no specimens). */
export async function rawInsert(pg: PGlite, ids: { clinicId: string; bridgeId: string; instrumentId: string }, batch: BridgeBatch) {
  const params: unknown[] = [];
  const values = batch.records.map((r) => {
    const p = r.payload as Extract<typeof r.payload, { kind: 'reading' }>;
    const row = [ids.clinicId, ids.bridgeId, r.key, ids.instrumentId, r.instrument, p.instrumentSerial, p.analyte, p.value, p.unit, p.sampleId, p.measuredAt, r.receivedAt, p.raw];
    const start = params.length;
    params.push(...row);
    return `(${row.map((_, i) => `$${start + i + 1}`).join(',')})`;
  });
  await pg.query(
    `insert into readings (clinic_id, bridge_id, idempotency_key, instrument_id, instrument_code, instrument_serial, analyte, value, unit, sample_id, measured_at, received_at, raw)
     values ${values.join(',')} on conflict do nothing`,
    params,
  );
}

const placeholders = (rows: unknown[][], params: unknown[]) =>
  rows
    .map((row) => {
      const start = params.length;
      params.push(...row);
      return `(${row.map((_, i) => `$${start + i + 1}`).join(',')})`;
    })
    .join(',');

/**
 * The same-rows baseline: every row ingest must store for the batch, and nothing it decides. One specimen
 * per sample ID (and one for the readings without), the readings linked to them, and one audit row per
 * reading, as three plain multi-row INSERTs in one transaction. No lookups (idempotency, specimens to
 * join, kit lot, QC state, unit mappings), no arrival numbers, no NOTIFY.
 */
export async function rawInsertSameRows(pg: PGlite, ids: { clinicId: string; bridgeId: string; instrumentId: string }, batch: BridgeBatch) {
  await pg.transaction(async (tx) => {
    const specimenOf = new Map<string, string>();
    for (const r of batch.records) {
      const p = r.payload as Extract<typeof r.payload, { kind: 'reading' }>;
      const tube = p.sampleId ?? '';
      if (!specimenOf.has(tube)) specimenOf.set(tube, randomUUID());
    }
    const specimenParams: unknown[] = [];
    const specimenRows = [...specimenOf].map(([tube, id]) => [id, ids.clinicId, ids.instrumentId, batch.records[0].instrument, tube || null, batch.records[0].receivedAt]);
    await tx.query(`insert into specimens (id, clinic_id, instrument_id, instrument_code, sample_id, received_at) values ${placeholders(specimenRows, specimenParams)}`, specimenParams);
    const readingParams: unknown[] = [];
    const audit: unknown[][] = [];
    const readingRows = batch.records.map((r) => {
      const p = r.payload as Extract<typeof r.payload, { kind: 'reading' }>;
      const id = randomUUID();
      audit.push([ids.clinicId, ids.bridgeId, 'reading.received', 'reading', id, JSON.stringify({ instrument: r.instrument, analyte: p.analyte, sampleId: p.sampleId })]);
      return [id, ids.clinicId, ids.bridgeId, r.key, ids.instrumentId, r.instrument, p.instrumentSerial, p.analyte, p.value, p.unit, p.sampleId, p.measuredAt, r.receivedAt, p.raw, specimenOf.get(p.sampleId ?? '')];
    });
    await tx.query(
      `insert into readings (id, clinic_id, bridge_id, idempotency_key, instrument_id, instrument_code, instrument_serial, analyte, value, unit, sample_id, measured_at, received_at, raw, specimen_id)
       values ${placeholders(readingRows, readingParams)} on conflict do nothing`,
      readingParams,
    );
    const auditParams: unknown[] = [];
    await tx.query(`insert into audit_events (clinic_id, actor_bridge_id, action, entity_type, entity_id, details) values ${placeholders(audit, auditParams)}`, auditParams);
  });
}

export async function benchInProcess(report: Report, dataDir: string, batches: number) {
  // The server's own PGlite settings (shared buffers), so memory and read times are the server's.
  const pg = await PGlite.create(`${dataDir}/pgdata`, pgliteOptions());
  const log: Logged[] = [];
  let capturing = false;
  const db = drizzle({ client: pg, schema, casing: 'snake_case', logger: { logQuery: (q, p) => capturing && log.push({ sql: q, params: p }) } });
  // A data set built before the latest migrations is brought up to date, as the server would on start.
  await migrate(db, { migrationsFolder: join(process.cwd(), 'db', 'migrations') });
  installDatabase({ db: db as unknown as Db, kind: 'pglite', listen: (c, f) => pg.listen(c, f), durable: async () => {}, close: () => pg.close() });
  const first = async <T>(q: string, p: unknown[] = []) => (await pg.query<T>(q, p)).rows[0];
  const clinic = await first<{ id: string }>(`select id from clinics order by created_at limit 1`);
  const tech = await first<Actor>(`select id as "userId", clinic_id as "clinicId", role, display_name as "displayName", email from staff_users where email = 'vet@fernhollow.example'`);
  const heavy = await first<{ id: string }>(`select id from patients where record_number = $1`, [HEAVY_PATIENT]);
  const { listWaiting } = await import('@/lib/readings/queries');
  const { waitingQuery } = await import('@/lib/validation/api');
  const intakePage = (await listWaiting(tech, waitingQuery.parse({}))).specimens.flatMap((s) => s.readings.map((r) => r.id));
  const ids = { heavyPatientId: heavy.id, intakePage };

  // BENCH_PARTS (as for the server section): without "reads", only ingest is measured here.
  const parts = process.env.BENCH_PARTS?.split(',');
  for (const path of parts && !parts.includes('reads') ? [] : await readPaths()) {
    await path.call(tech, ids); // warm
    const times: number[] = [];
    for (let i = 0; i < 15; i++) {
      const t = now();
      await path.call(tech, ids);
      times.push(ms(t));
    }
    log.length = 0;
    capturing = true;
    await path.call(tech, ids);
    capturing = false;
    // EXPLAIN ANALYZE every statement; the slowest is the path's main query.
    let main = { sql: '', plan: '', ms: -1 };
    for (const q of log) {
      const rows = (await pg.query<{ 'QUERY PLAN': string }>(`explain (analyze, costs off, timing on, summary on) ${q.sql}`, q.params)).rows;
      const plan = rows.map((r) => r['QUERY PLAN']).join('\n');
      const exec = Number(/Execution Time: ([\d.]+) ms/.exec(plan)?.[1] ?? 0);
      if (exec > main.ms) main = { sql: q.sql, plan, ms: exec };
    }
    report.explains.push({ query: `${path.name} (${log.length} quer${log.length === 1 ? 'y' : 'ies'})`, sql: main.sql, plan: main.plan });
    report.add({
      section: 'read (in-process)',
      name: `${path.name} p95 (${log.length} SQL quer${log.length === 1 ? 'y' : 'ies'})`,
      value: percentile(times, 95),
      unit: 'ms',
      baseline: 'its main query in PostgreSQL (EXPLAIN ANALYZE)',
      baselineValue: main.ms,
    });
  }

  // Ingest, lib against the raw baselines, alternating so all see the same neighbours on the shared cores.
  const bridge = await first<Bridge>(`select id, clinic_id as "clinicId", name from bridges where clinic_id = $1 limit 1`, [clinic.id]);
  const instrument = await first<{ id: string }>(`select id from instruments where clinic_id = $1 and code = 'crp-reader'`, [clinic.id]);
  const { ingestBatch } = await import('@/lib/readings/ingest');
  const target = { clinicId: clinic.id, bridgeId: bridge.id, instrumentId: instrument.id };
  let rawMs = 0;
  let sameRowsMs = 0;
  let libMs = 0;
  let statements = 0;
  for (let n = -1; n < batches; n++) {
    // n = -1 warms each path (plans, caches) and is not counted.
    let t = now();
    await rawInsert(pg, target, benchBatch(`raw${n}`, n));
    if (n >= 0) rawMs += ms(t);
    t = now();
    await rawInsertSameRows(pg, target, benchBatch(`same${n}`, n));
    if (n >= 0) sameRowsMs += ms(t);
    log.length = 0;
    capturing = true;
    t = now();
    await ingestBatch(bridge, benchBatch(`lib${n}`, n));
    if (n >= 0) libMs += ms(t);
    capturing = false;
    statements = log.length;
  }
  const rawRate = (batches * BATCH) / (rawMs / 1000);
  const sameRowsRate = (batches * BATCH) / (sameRowsMs / 1000);
  const libRate = (batches * BATCH) / (libMs / 1000);
  report.add({
    section: 'ingest (in-process)',
    name: `lib ingestBatch, ${batches} × ${BATCH} readings (${statements} SQL statements a batch)`,
    value: libRate,
    unit: 'readings/s',
    baseline: 'raw multi-row INSERT of the readings alone',
    baselineValue: rawRate,
    target: '≥ 0.7 of raw',
    met: libRate / rawRate >= 0.7,
  });
  report.add({
    section: 'ingest (in-process)',
    name: `lib ingestBatch, ${batches} × ${BATCH} readings`,
    value: libRate,
    unit: 'readings/s',
    baseline: 'raw INSERTs of the same rows (specimens, readings, audit rows; one transaction)',
    baselineValue: sameRowsRate,
    target: '≥ 0.7 of raw',
    met: libRate / sameRowsRate >= 0.7,
  });

  // The clinic's exact-ID rule switched on: each reading with a sample ID is looked up against open tests.
  await pg.query(`update clinics set settings = settings || '{"autoAssignExactId": true}' where id = $1`, [clinic.id]);
  let autoMs = 0;
  const autoBatches = Math.max(2, Math.floor(batches / 4));
  for (let n = 0; n < autoBatches; n++) {
    const t = now();
    await ingestBatch(bridge, benchBatch('auto', n));
    autoMs += ms(t);
  }
  await pg.query(`update clinics set settings = settings - 'autoAssignExactId' where id = $1`, [clinic.id]);
  report.add({
    section: 'ingest (in-process)',
    name: `lib ingestBatch with the exact-ID rule on, ${autoBatches} × ${BATCH}`,
    value: (autoBatches * BATCH) / (autoMs / 1000),
    unit: 'readings/s',
    baseline: 'raw multi-row INSERT',
    baselineValue: rawRate,
  });
  await pg.query(`select 1`);
  await db.execute(sql`select 1`);
  await pg.close();
  return { rawRate, sameRowsRate };
}
