import 'server-only';
import { randomUUID } from 'node:crypto';
import { and, eq, inArray, sql } from 'drizzle-orm';
import { getDatabase, type Tx } from '@/db/client';
import { bridges, instruments, readings, unparsedCaptures, type Bridge, type Reading } from '@/db/schema';
import { insertJsonRows } from '@/lib/bulk-insert';
import { recordAudits, type AuditEntry } from '@/lib/audit';
import { publishBatch } from '@/lib/live/bus';
import type { BridgeBatch, BridgeBatchResult, BridgeRecord } from '@/lib/validation/readings';
import { autoAssignBatchOnIngest } from './suggestions';
import { decideQuality, NO_QUALITY, qualityColumnsOnArrival, recordQuality, type QualityDecision } from '@/lib/quality/ingest-step';
import { specimensFor } from './specimens';
import { unitsOnArrival } from './instrument-units';

/** PostgreSQL text cannot hold U+0000, which line noise often sends; keep it visible as ␀ (U+2400) instead. */
export function storable<T>(value: T): T {
  if (typeof value === 'string') return value.replaceAll('\u0000', '\u2400') as T;
  if (Array.isArray(value)) return value.map(storable) as T;
  if (value && typeof value === 'object') {
    return Object.fromEntries(Object.entries(value).map(([k, v]) => [k, storable(v)])) as T;
  }
  return value;
}

/** The ids resent records were stored under the first time (same bridge, same keys), in one query. */
async function storedIds(tx: Tx, table: typeof readings | typeof unparsedCaptures, bridgeId: string | null, keys: string[]): Promise<Map<string, string>> {
  // An import's keys are new by construction (its own id in each): nothing can be stored under them yet.
  if (!keys.length || bridgeId === null) return new Map();
  const rows = await tx
    .select({ id: table.id, key: table.idempotencyKey })
    .from(table)
    .where(and(eq(table.bridgeId, bridgeId), inArray(table.idempotencyKey, keys)));
  return new Map(rows.map((r) => [r.key, r.id]));
}

type ReadingRecord = BridgeRecord & { payload: Extract<BridgeRecord['payload'], { kind: 'reading' }> };
type CaptureRecord = BridgeRecord & { payload: Extract<BridgeRecord['payload'], { kind: 'unparsed' }> };

/** Where records come from: a bridge's upload, or a capture file an administrator imported. */
export type IngestSource =
  | { clinicId: string; bridgeId: string; captureImportId?: undefined; importedBy?: undefined }
  | { clinicId: string; bridgeId: null; captureImportId: string; importedBy: string };

/**
 * Stores records in the caller's transaction, set-wise: whatever the number of records, one query finds
 * those already stored, specimens are found and made for all at once (lib/readings/specimens.ts), the
 * lab-quality step is decided for all before anything is stored (lib/quality/ingest-step.ts), and one
 * INSERT each stores the readings, the unparsed captures (ON CONFLICT DO NOTHING on (bridge, key)) and
 * their audit events, with one NOTIFY per kind carrying the new ids. Every reading is stored unassigned
 * (or as a control run): only the caller may apply the clinic's exact-ID rule (a bridge upload does).
 * Used by a bridge's upload (ingestBatch) and by a capture-file import (lib/import/captures.ts).
 */
export async function storeRecords(tx: Tx, source: IngestSource, received: BridgeRecord[]) {
  const records = storable(received);
  const codes = [...new Set(records.map((r) => r.instrument))];
  const known = codes.length
    ? await tx
        .select({ id: instruments.id, code: instruments.code })
        .from(instruments)
        .where(and(eq(instruments.clinicId, source.clinicId), inArray(instruments.code, codes)))
    : [];
  const instrumentByCode = new Map(known.map((i) => [i.code, i.id]));
  const common = (record: BridgeRecord) => ({
    clinicId: source.clinicId,
    bridgeId: source.bridgeId,
    captureImportId: source.captureImportId ?? null,
    idempotencyKey: record.key,
    instrumentId: instrumentByCode.get(record.instrument) ?? null,
    instrumentCode: record.instrument,
    receivedAt: new Date(record.receivedAt),
    raw: record.payload.raw,
  });

  const readingRecords = records.filter((r): r is ReadingRecord => r.payload.kind === 'reading');
  const captureRecords = records.filter((r): r is CaptureRecord => r.payload.kind === 'unparsed');

  // Records this bridge already sent are not stored again, nor is a key sent twice in this batch.
  const alreadyStored = await storedIds(tx, readings, source.bridgeId, readingRecords.map((r) => r.key));
  const seen = new Set(alreadyStored.keys());
  const fresh = readingRecords.filter((r) => !seen.has(r.key) && seen.add(r.key));
  // Ids made here, so every step below knows each reading's id before the one INSERT stores them all.
  const ids = fresh.map(() => randomUUID());
  const measuredAt = fresh.map((r) => (r.payload.measuredAt ? new Date(r.payload.measuredAt) : null));

  // The readings of one sample (same instrument and sample ID, or one message) share a specimen.
  const specimenIds = await specimensFor(
    tx,
    fresh.map((record, i) => ({ ...common(record), sampleId: record.payload.sampleId, patientRef: record.payload.patientRef, measuredAt: measuredAt[i] })),
  );

  // Units UCUM cannot read are listed per instrument; one an administrator has mapped is read as mapped.
  const units = await unitsOnArrival(
    tx,
    source.clinicId,
    fresh.map((r) => ({ key: r.key, instrumentId: instrumentByCode.get(r.instrument) ?? null, unit: r.payload.unit })),
  );

  // Lab quality (QC recognition, kit lot, QC-failed and expiry marks), decided before anything may place a
  // reading, and stored by the same INSERT.
  const decisions = await decideQuality(
    tx,
    source.clinicId,
    fresh.map((record, i) => {
      const p = record.payload;
      return {
        id: ids[i],
        instrumentId: instrumentByCode.get(record.instrument) ?? null,
        analyte: p.analyte,
        value: p.value,
        // The unit as it will be stored (an administrator's mapping applied), so a control run is compared in it.
        unit: units.get(record.key)?.unit ?? p.unit ?? null,
        sampleId: p.sampleId,
        measuredAt: measuredAt[i],
        receivedAt: new Date(record.receivedAt),
        specimenRole: p.specimenRole,
        controlLevel: p.controlLevel,
      };
    }),
  );

  // Arrival numbers in the order the bridge sent the records (the analyzer's own order), drawn from the
  // column's sequence and handed out sorted, so a panel lists its tests as the analyzer printed them.
  // The sequence is looked up once (not per number), and the numbers come back as one text.
  const arrivals = fresh.length
    ? String(
        (
          await tx.execute<{ n: string }>(
            sql`select string_agg(nextval(q.s)::text, ',') as n from (select pg_get_serial_sequence('readings', 'arrival')::regclass as s offset 0) as q cross join generate_series(1, ${fresh.length})`,
          )
        ).rows[0].n,
      )
        .split(',')
        .map(Number)
        .sort((a, b) => a - b)
    : [];
  // Every column set on every row (the JSON insert leaves none to a default).
  const readingRows = fresh.map((record, index) => {
    const p = record.payload;
    const unit = units.get(record.key);
    return {
      ...common(record),
      id: ids[index],
      arrival: arrivals[index],
      valueDecimals: p.value === null ? null : (p.decimals ?? null),
      specimenId: specimenIds[index],
      ...qualityColumnsOnArrival(decisions[index]),
      instrumentSerial: p.instrumentSerial ?? null,
      instrumentRange: p.referenceRange ?? null,
      resultStatus: p.resultStatus ?? null,
      analyte: p.analyte,
      value: p.value,
      // A result is a number, a code or text (lib/validation/readings.ts), with the notes sent beside it.
      valueCode: p.code ?? null,
      valueText: p.text ?? null,
      notes: p.notes ?? [],
      comparator: p.comparator ?? null,
      unit: unit?.unit ?? p.unit ?? null,
      printedUnit: unit?.printedUnit ?? null,
      flags: p.flags ?? [],
      sampleId: p.sampleId ?? null,
      patientRef: p.patientRef ?? null,
      measuredAt: measuredAt[index],
    };
  });
  // As one JSON document rather than 5,000 parameters (lib/bulk-insert.ts).
  const createdReadings = await insertJsonRows<typeof readings, Pick<Reading, 'id' | 'idempotencyKey'>>(
    tx,
    readings,
    readingRows,
    sql`on conflict (bridge_id, idempotency_key) do nothing returning id, idempotency_key as "idempotencyKey"`,
  );
  const createdCaptures = captureRecords.length
    ? await tx
        .insert(unparsedCaptures)
        .values(captureRecords.map((record) => ({ ...common(record), reason: record.payload.reason })))
        .onConflictDoNothing({ target: [unparsedCaptures.bridgeId, unparsedCaptures.idempotencyKey] })
        .returning({ id: unparsedCaptures.id, key: unparsedCaptures.idempotencyKey })
    : [];

  const newReading = new Map(createdReadings.map((r) => [r.idempotencyKey, r.id]));
  const newCapture = new Map(createdCaptures.map((r) => [r.key, r.id]));
  // Stored before (found above), or by another upload of the same records while this one ran.
  const earlierReadings = new Map([
    ...alreadyStored,
    ...(await storedIds(tx, readings, source.bridgeId, readingRecords.filter((r) => !newReading.has(r.key) && !alreadyStored.has(r.key)).map((r) => r.key))),
  ]);
  const earlierCaptures = await storedIds(tx, unparsedCaptures, source.bridgeId, captureRecords.filter((r) => !newCapture.has(r.key)).map((r) => r.key));

  // In the batch's order; a key sent twice in one batch is created once and a duplicate after that.
  const results: BridgeBatchResult['results'] = [];
  const audits: AuditEntry[] = [];
  const announced = new Set<string>();
  const actor = source.bridgeId !== null ? { actorBridgeId: source.bridgeId } : { actorUserId: source.importedBy };
  const how = source.bridgeId !== null ? 'received' : 'imported';
  const from = source.captureImportId ? { captureImportId: source.captureImportId } : {};
  for (const record of records) {
    const isReading = record.payload.kind === 'reading';
    const createdId = (isReading ? newReading : newCapture).get(record.key);
    if (createdId && !announced.has(createdId)) {
      announced.add(createdId);
      results.push({ key: record.key, status: 'created', id: createdId });
      audits.push({
        clinicId: source.clinicId,
        ...actor,
        ...(record.payload.kind === 'reading'
          ? {
              action: `reading.${how}`,
              entityType: 'reading',
              entityId: createdId,
              details: { instrument: record.instrument, analyte: record.payload.analyte, sampleId: record.payload.sampleId, ...from },
            }
          : { action: `capture.${how}`, entityType: 'unparsed_capture', entityId: createdId, details: { instrument: record.instrument, reason: record.payload.reason, ...from } }),
      });
      continue;
    }
    const id = createdId ?? (isReading ? earlierReadings : earlierCaptures).get(record.key);
    if (!id) throw new Error(`ingest: record ${record.key} was neither stored nor found stored`);
    results.push({ key: record.key, status: 'duplicate', id });
  }
  await recordAudits(tx, audits);
  await publishBatch(tx, { type: 'reading.created', clinicId: source.clinicId }, createdReadings.map((r) => r.id));
  await publishBatch(tx, { type: 'capture.created', clinicId: source.clinicId }, createdCaptures.map((r) => r.id));
  const decisionById = new Map<string, QualityDecision>(ids.map((id, i) => [id, decisions[i]]));
  await recordQuality(tx, { clinicId: source.clinicId, ...actor }, createdReadings.map((reading) => ({ reading, decision: decisionById.get(reading.id) ?? NO_QUALITY })));
  // What was stored new, as the exact-ID rule and an import's counts need it; a control run never waits in Intake.
  const stored = fresh.flatMap((record, i) =>
    newReading.get(record.key) === ids[i]
      ? [{ id: ids[i], status: decisions[i].control ? ('control' as const) : ('unassigned' as const), sampleId: record.payload.sampleId ?? null, patientRef: record.payload.patientRef ?? null }]
      : [],
  );
  return { results, readings: stored, captureIds: createdCaptures.map((r) => r.id) };
}

/**
 * Stores a bridge's batch in one transaction (storeRecords), with the clinic's exact-ID rule looked up once
 * for the whole batch. A record whose key this bridge already sent is acknowledged as a duplicate and not
 * stored again, so the bridge can resend freely.
 * Returns only once the transaction is on disk (Database.durable): the bridge drops what it is answered
 * for, so an answer given before that would lose readings in a power cut.
 */
export async function ingestBatch(bridge: Bridge, received: BridgeBatch): Promise<BridgeBatchResult> {
  const store = await getDatabase();
  const result = await store.db.transaction(async (tx) => {
    const stored = await storeRecords(tx, { clinicId: bridge.clinicId, bridgeId: bridge.id }, received.records);
    // Only the clinic's opt-in exact-ID rule may place a reading without a person; off by default.
    await autoAssignBatchOnIngest(tx, bridge, stored.readings.filter((r) => r.status === 'unassigned'));
    await tx.update(bridges).set({ lastSeenAt: new Date() }).where(eq(bridges.id, bridge.id));
    return { results: stored.results };
  });
  // Duplicates too: the first answer for those keys may have failed before its sync finished.
  await store.durable();
  return result;
}
