import 'server-only';
import { and, eq, inArray, sql } from 'drizzle-orm';
import { getDatabase, type Tx } from '@/db/client';
import { bridges, instruments, readings, unparsedCaptures, type Bridge } from '@/db/schema';
import { recordAudits, type AuditEntry } from '@/lib/audit';
import { publishBatch } from '@/lib/live/bus';
import type { BridgeBatch, BridgeBatchResult, BridgeRecord } from '@/lib/validation/readings';
import { autoAssignBatchOnIngest } from './suggestions';
import { applyQualityOnIngest } from '@/lib/quality/ingest-step';
import { specimenFor } from './specimens';
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
 * Stores records in the caller's transaction, set-wise: one multi-row INSERT for the readings and one for
 * the unparsed captures (ON CONFLICT DO NOTHING on (bridge, key)), one for their audit events, one NOTIFY
 * per kind carrying the new ids; then the lab-quality step on each new reading. Every reading is stored
 * unassigned: only the caller may apply the clinic's exact-ID rule (a bridge upload does).
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

  // The readings of one sample (same instrument and sample ID, or one message) share a specimen. Records
  // this bridge already sent keep theirs; within the batch, one message's readings share one lookup.
  const alreadyStored = await storedIds(tx, readings, source.bridgeId, readingRecords.map((r) => r.key));
  const specimenByRecord = new Map<string, string>();
  const specimenInBatch = new Map<string, string>();
  for (const record of readingRecords) {
    if (alreadyStored.has(record.key)) continue;
    const p = record.payload;
    const measuredAt = p.measuredAt ? new Date(p.measuredAt) : null;
    const sameSample = `${record.instrument}|${p.sampleId?.trim().toLowerCase() ?? ''}|${p.patientRef?.trim() ?? ''}|${p.sampleId?.trim() ? '' : (measuredAt?.toISOString() ?? record.key)}`;
    let specimenId = specimenInBatch.get(sameSample);
    if (!specimenId) {
      specimenId = await specimenFor(tx, { ...common(record), sampleId: p.sampleId, patientRef: p.patientRef, measuredAt });
      specimenInBatch.set(sameSample, specimenId);
    }
    specimenByRecord.set(record.key, specimenId);
  }

  // Units UCUM cannot read are listed per instrument; one an administrator has mapped is read as mapped.
  const units = await unitsOnArrival(
    tx,
    source.clinicId,
    readingRecords.filter((r) => !alreadyStored.has(r.key)).map((r) => ({ key: r.key, instrumentId: instrumentByCode.get(r.instrument) ?? null, unit: r.payload.unit })),
  );

  // Arrival numbers in the order the bridge sent the records (the analyzer's own order), drawn from the
  // column's sequence and handed out sorted, so a panel lists its tests as the analyzer printed them.
  const arrivals = readingRecords.length
    ? (
        await tx.execute<{ n: string }>(
          sql`select nextval(pg_get_serial_sequence('readings', 'arrival')) as n from generate_series(1, ${readingRecords.length})`,
        )
      ).rows
        .map((r) => Number(r.n))
        .sort((a, b) => a - b)
    : [];
  const createdReadings = readingRecords.length
    ? await tx
        .insert(readings)
        .values(
          readingRecords.map((record, index) => {
            const p = record.payload;
            return {
              ...common(record),
              arrival: arrivals[index],
              valueDecimals: p.value === null ? null : (p.decimals ?? null),
              specimenId: specimenByRecord.get(record.key) ?? null,
              instrumentSerial: p.instrumentSerial,
              instrumentRange: p.referenceRange,
              resultStatus: p.resultStatus,
              analyte: p.analyte,
              value: p.value,
              // A result is a number, a code or text (lib/validation/readings.ts), with the notes sent beside it.
              valueCode: p.code,
              valueText: p.text,
              notes: p.notes,
              comparator: p.comparator,
              unit: units.get(record.key)?.unit ?? p.unit,
              printedUnit: units.get(record.key)?.printedUnit ?? null,
              flags: p.flags,
              sampleId: p.sampleId,
              patientRef: p.patientRef,
              measuredAt: p.measuredAt ? new Date(p.measuredAt) : null,
            };
          }),
        )
        .onConflictDoNothing({ target: [readings.bridgeId, readings.idempotencyKey] })
        .returning()
    : [];
  const createdCaptures = captureRecords.length
    ? await tx
        .insert(unparsedCaptures)
        .values(captureRecords.map((record) => ({ ...common(record), reason: record.payload.reason })))
        .onConflictDoNothing({ target: [unparsedCaptures.bridgeId, unparsedCaptures.idempotencyKey] })
        .returning({ id: unparsedCaptures.id, key: unparsedCaptures.idempotencyKey })
    : [];

  const newReading = new Map(createdReadings.map((r) => [r.idempotencyKey, r.id]));
  const newCapture = new Map(createdCaptures.map((r) => [r.key, r.id]));
  const earlierReadings = await storedIds(tx, readings, source.bridgeId, readingRecords.filter((r) => !newReading.has(r.key)).map((r) => r.key));
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
  // Lab quality (QC recognition, kit lot, QC-failed mark): a separate step, before anything may place a reading.
  const payloadByKey = new Map(readingRecords.map((r) => [r.key, r.payload]));
  const checked = [];
  for (const row of createdReadings) checked.push(await applyQualityOnIngest(tx, row, payloadByKey.get(row.idempotencyKey) ?? {}, source.importedBy));
  return { results, readings: checked, captureIds: createdCaptures.map((r) => r.id) };
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
