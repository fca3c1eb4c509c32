import 'server-only';
import { and, asc, count, eq, max } from 'drizzle-orm';
import { db } from '@/db/client';
import { bridges, instruments, readings, unparsedCaptures } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { evaluateGroups, qcReadings } from './qc';
import { clinicClock, kitLotsWithStock } from './store';

// Instrument and bridge health for the instruments page: the link as the bridge last reported it
// (heartbeat), what arrived, the kit lot loaded and the QC status; a bridge silent for longer than the
// clinic's timeout is offline.

interface HeartbeatSource {
  state?: string;
  detail?: string;
  warnings?: string[];
  lastByteAt?: string;
  bytesReceived?: number;
  checksumRetransmissions?: number;
  framingErrors?: number;
  at?: string;
}

/** A bridge is offline when it has not been heard from within `minutes` (never heard from counts as offline). */
export function bridgeOffline(lastSeenAt: Date | null, now: Date, minutes: number): boolean {
  return !lastSeenAt || now.getTime() - lastSeenAt.getTime() > minutes * 60_000;
}

export async function labHealth(actor: Actor, now = new Date()) {
  const database = await db();
  const [clock, instrumentRows, bridgeRows, lastReadings, openCaptures, lots, qc] = await Promise.all([
    clinicClock(database, actor.clinicId),
    database
      .select({ id: instruments.id, code: instruments.code, name: instruments.name, analytes: instruments.analytes, health: instruments.health, bridgeId: instruments.bridgeId, active: instruments.active, operatingMinC: instruments.operatingMinC, operatingMaxC: instruments.operatingMaxC })
      .from(instruments)
      .where(eq(instruments.clinicId, actor.clinicId))
      .orderBy(asc(instruments.name)),
    database
      .select({ id: bridges.id, name: bridges.name, lastSeenAt: bridges.lastSeenAt, revokedAt: bridges.revokedAt })
      .from(bridges)
      .where(eq(bridges.clinicId, actor.clinicId))
      .orderBy(asc(bridges.name)),
    database
      .select({ code: readings.instrumentCode, at: max(readings.receivedAt) })
      .from(readings)
      .where(eq(readings.clinicId, actor.clinicId))
      .groupBy(readings.instrumentCode),
    database
      .select({ code: unparsedCaptures.instrumentCode, n: count() })
      .from(unparsedCaptures)
      .where(and(eq(unparsedCaptures.clinicId, actor.clinicId), eq(unparsedCaptures.status, 'open')))
      .groupBy(unparsedCaptures.instrumentCode),
    kitLotsWithStock(database, actor.clinicId),
    qcReadings(database, actor.clinicId).then(evaluateGroups),
  ]);
  const minutes = clock.settings.bridgeOfflineMinutes;
  const bridgeViews = bridgeRows
    .filter((b) => !b.revokedAt)
    .map((b) => ({ id: b.id, name: b.name, lastSeenAt: b.lastSeenAt, offline: bridgeOffline(b.lastSeenAt, now, minutes) }));
  const bridgeOf = new Map(bridgeViews.map((b) => [b.id, b]));
  const lastOf = new Map(lastReadings.map((r) => [r.code, r.at]));
  const capturesOf = new Map(openCaptures.map((c) => [c.code, c.n]));
  const views = instrumentRows
    .filter((i) => i.active)
    .map((i) => {
      const health = (i.health ?? {}) as HeartbeatSource;
      const bridge = i.bridgeId ? bridgeOf.get(i.bridgeId) ?? null : null;
      return {
        id: i.id,
        code: i.code,
        name: i.name,
        bridge: bridge ? { name: bridge.name, offline: bridge.offline, lastSeenAt: bridge.lastSeenAt } : null,
        // A port state from a bridge that has gone silent is stale: say so rather than show "open".
        port: bridge?.offline ? 'unknown (bridge offline)' : (health.state ?? 'not reported'),
        detail: health.detail ?? null,
        warnings: health.warnings ?? [],
        reportedAt: health.at ?? null,
        lastByteAt: health.lastByteAt ?? null,
        lastReadingAt: lastOf.get(i.code) ?? null,
        openCaptures: capturesOf.get(i.code) ?? 0,
        checksumRetransmissions: health.checksumRetransmissions ?? null,
        framingErrors: health.framingErrors ?? null,
        operatingRange: { minC: i.operatingMinC, maxC: i.operatingMaxC },
        kitLots: lots
          .filter((l) => l.instrumentId === i.id)
          .map((l) => ({ id: l.id, analyte: l.analyte, lotNumber: l.lotNumber, remaining: l.stock.remaining, total: l.stock.total, warnings: l.stock.warnings })),
        qc: i.analytes.map((analyte) => ({ analyte, status: qc.find((g) => g.analyte === analyte && g.instrumentId === i.id)?.status ?? 'none' })),
      };
    });
  return { offlineAfterMinutes: minutes, bridges: bridgeViews, instruments: views, now: now.toISOString() };
}
