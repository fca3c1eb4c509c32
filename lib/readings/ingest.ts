import 'server-only';
import { and, eq, inArray } from 'drizzle-orm';
import { db, type Tx } from '@/db/client';
import { bridges, instruments, readings, unparsedCaptures, type Bridge } from '@/db/schema';
import { recordAudit } from '@/lib/audit';
import { publish } from '@/lib/live/bus';
import type { BridgeBatch, BridgeBatchResult } from '@/lib/validation/readings';
import { specimenFor } from './specimens';
import { autoAssignOnIngest } from './suggestions';

/** PostgreSQL text cannot hold U+0000, which line noise often sends; keep it visible as ␀ (U+2400) instead. */
export function storable<T>(value: T): T {
  if (typeof value === 'string') return value.replaceAll('\u0000', '\u2400') as T;
  if (Array.isArray(value)) return value.map(storable) as T;
  if (value && typeof value === 'object') {
    return Object.fromEntries(Object.entries(value).map(([k, v]) => [k, storable(v)])) as T;
  }
  return value;
}

/** The id a resent record was stored under the first time (same bridge, same key). */
async function storedId(tx: Tx, table: typeof readings | typeof unparsedCaptures, bridgeId: string, key: string): Promise<string> {
  const [existing] = await tx
    .select({ id: table.id })
    .from(table)
    .where(and(eq(table.bridgeId, bridgeId), eq(table.idempotencyKey, key)));
  return existing.id;
}

/**
 * Stores a bridge's batch in one transaction. A record whose key this bridge already sent is
 * acknowledged as a duplicate and not stored again, so the bridge can resend freely.
 */
export async function ingestBatch(bridge: Bridge, received: BridgeBatch): Promise<BridgeBatchResult> {
  const batch = storable(received);
  const database = await db();
  return database.transaction(async (tx) => {
    const codes = [...new Set(batch.records.map((r) => r.instrument))];
    const known = await tx
      .select({ id: instruments.id, code: instruments.code })
      .from(instruments)
      .where(and(eq(instruments.clinicId, bridge.clinicId), inArray(instruments.code, codes)));
    const instrumentByCode = new Map(known.map((i) => [i.code, i.id]));

    const results: BridgeBatchResult['results'] = [];
    for (const record of batch.records) {
      const common = {
        clinicId: bridge.clinicId,
        bridgeId: bridge.id,
        idempotencyKey: record.key,
        instrumentId: instrumentByCode.get(record.instrument) ?? null,
        instrumentCode: record.instrument,
        receivedAt: new Date(record.receivedAt),
        raw: record.payload.raw,
      };
      const payload = record.payload;
      if (payload.kind === 'unparsed') {
        const [row] = await tx
          .insert(unparsedCaptures)
          .values({ ...common, reason: payload.reason })
          .onConflictDoNothing({ target: [unparsedCaptures.bridgeId, unparsedCaptures.idempotencyKey] })
          .returning({ id: unparsedCaptures.id });
        if (!row) {
          results.push({ key: record.key, status: 'duplicate', id: await storedId(tx, unparsedCaptures, bridge.id, record.key) });
          continue;
        }
        await recordAudit(tx, {
          clinicId: bridge.clinicId,
          actorBridgeId: bridge.id,
          action: 'capture.received',
          entityType: 'unparsed_capture',
          entityId: row.id,
          details: { instrument: record.instrument, reason: payload.reason },
        });
        await publish(tx, { type: 'capture.created', clinicId: bridge.clinicId, id: row.id });
        results.push({ key: record.key, status: 'created', id: row.id });
        continue;
      }

      // The readings of one sample (same instrument and sample ID, or one message) share a specimen.
      const measuredAt = payload.measuredAt ? new Date(payload.measuredAt) : null;
      const specimenId = await specimenFor(tx, { ...common, sampleId: payload.sampleId, patientRef: payload.patientRef, measuredAt });
      const [row] = await tx
        .insert(readings)
        .values({
          ...common,
          specimenId,
          instrumentSerial: payload.instrumentSerial,
          instrumentRange: payload.referenceRange,
          resultStatus: payload.resultStatus,
          analyte: payload.analyte,
          value: payload.value,
          comparator: payload.comparator,
          unit: payload.unit,
          flags: payload.flags,
          sampleId: payload.sampleId,
          patientRef: payload.patientRef,
          measuredAt,
        })
        .onConflictDoNothing({ target: [readings.bridgeId, readings.idempotencyKey] })
        .returning();
      if (!row) {
        results.push({ key: record.key, status: 'duplicate', id: await storedId(tx, readings, bridge.id, record.key) });
        continue;
      }
      await recordAudit(tx, {
        clinicId: bridge.clinicId,
        actorBridgeId: bridge.id,
        action: 'reading.received',
        entityType: 'reading',
        entityId: row.id,
        details: { instrument: record.instrument, analyte: payload.analyte, sampleId: payload.sampleId },
      });
      await publish(tx, { type: 'reading.created', clinicId: bridge.clinicId, id: row.id });
      // Only the clinic's opt-in exact-ID rule may place a reading without a person; off by default.
      await autoAssignOnIngest(tx, bridge, row);
      results.push({ key: record.key, status: 'created', id: row.id });
    }

    await tx.update(bridges).set({ lastSeenAt: new Date() }).where(eq(bridges.id, bridge.id));
    return { results };
  });
}
