import 'server-only';
import { and, eq, inArray } from 'drizzle-orm';
import type { Executor } from '@/db/client';
import { instruments, kitLots, roomTemperatureLogs } from '@/db/schema';
import { QUALITY_MARK_DETAIL, QUALITY_MARKS, type QualityMark } from './labels';
import { localDay, temperatureMark } from './kits';
import { clinicClock } from './store';

// Lab-quality marks shown on a result beside (not inside) its clinical flags: QC failed and expired kit lot
// are fixed when the reading arrives; the room-temperature mark is worked out from the day's log entry, so
// an entry written later in the day clears it.

export interface ResultQualityMark {
  code: QualityMark | 'room-temperature';
  label: string;
  detail: string;
}

interface MarkedRow {
  id: string;
  instrumentId: string | null;
  measuredAt: Date | string | null;
  receivedAt: Date | string;
  qualityMarks?: string[] | null;
  kitLotId?: string | null;
}

export async function qualityMarksFor(tx: Executor, clinicId: string, rows: MarkedRow[]): Promise<Map<string, ResultQualityMark[]>> {
  const out = new Map<string, ResultQualityMark[]>();
  if (rows.length === 0) return out;
  const { timeZone } = await clinicClock(tx, clinicId);
  const instrumentIds = [...new Set(rows.map((r) => r.instrumentId).filter((v): v is string => !!v))];
  const lotIds = [...new Set(rows.map((r) => r.kitLotId).filter((v): v is string => !!v))];
  const dayOf = (r: MarkedRow) => localDay(new Date(r.measuredAt ?? r.receivedAt), timeZone);
  const days = [...new Set(rows.map(dayOf))];
  const [ranges, lots, logs] = await Promise.all([
    instrumentIds.length
      ? tx
          .select({ id: instruments.id, minC: instruments.operatingMinC, maxC: instruments.operatingMaxC })
          .from(instruments)
          .where(and(eq(instruments.clinicId, clinicId), inArray(instruments.id, instrumentIds)))
      : Promise.resolve([]),
    lotIds.length
      ? tx.select({ id: kitLots.id, lotNumber: kitLots.lotNumber, expiresOn: kitLots.expiresOn }).from(kitLots).where(inArray(kitLots.id, lotIds))
      : Promise.resolve([]),
    tx
      .select({ day: roomTemperatureLogs.day, temperatureC: roomTemperatureLogs.temperatureC })
      .from(roomTemperatureLogs)
      .where(and(eq(roomTemperatureLogs.clinicId, clinicId), inArray(roomTemperatureLogs.day, days))),
  ]);
  const rangeOf = new Map(ranges.map((r) => [r.id, r]));
  const lotOf = new Map(lots.map((l) => [l.id, l]));
  const logOf = new Map(logs.map((l) => [l.day, l]));
  for (const row of rows) {
    const marks: ResultQualityMark[] = [];
    for (const code of row.qualityMarks ?? []) {
      if (code === 'qc-failed') {
        marks.push({ code, label: QUALITY_MARKS[code], detail: QUALITY_MARK_DETAIL[code] });
      } else if (code === 'kit-expired') {
        const lot = row.kitLotId ? lotOf.get(row.kitLotId) : undefined;
        marks.push({ code, label: QUALITY_MARKS[code], detail: lot ? `Kit lot ${lot.lotNumber} expired on ${lot.expiresOn}.` : 'The kit lot had expired.' });
      }
    }
    const range = row.instrumentId ? rangeOf.get(row.instrumentId) : undefined;
    const day = dayOf(row);
    const temperature = temperatureMark(logOf.get(day) ?? null, range ? { minC: range.minC, maxC: range.maxC } : null);
    if (temperature) marks.push({ code: 'room-temperature', label: 'Room temperature', detail: `${day}: ${temperature}.` });
    if (marks.length) out.set(row.id, marks);
  }
  return out;
}
