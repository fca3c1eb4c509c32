import 'server-only';
import { and, asc, eq, sql } from 'drizzle-orm';
import { db, type Tx } from '@/db/client';
import { instrumentUnits, instruments, staffUsers } from '@/db/schema';
import { requirePermission, type Actor } from '@/lib/auth/guards';
import { recordAudit } from '@/lib/audit';
import { checkUnit } from '@/lib/clinical/units';
import { ApiError, notFound } from '@/lib/http';
import { publish } from '@/lib/live/bus';
import type { UnitMappingInput } from '@/lib/validation/api';

/** A unit as the reading keeps it: `unit` is read with, `printedUnit` set only when a mapping replaced it. */
export type UnitOnArrival = { unit: string | null; printedUnit: string | null };

/**
 * At ingest, for one batch: units UCUM cannot read are listed per instrument (instrument_units, one
 * upsert for the batch) and, where an administrator has mapped one, the reading is read in the mapped
 * UCUM unit with the printed text kept beside it. Units UCUM reads, and readings of an instrument that is
 * not configured, are left as printed.
 */
export async function unitsOnArrival(
  tx: Tx,
  clinicId: string,
  readings: readonly { key: string; instrumentId: string | null; unit: string | null }[],
): Promise<Map<string, UnitOnArrival>> {
  const out = new Map<string, UnitOnArrival>();
  const unknown = new Map<string, { instrumentId: string; printed: string; count: number }>();
  for (const r of readings) {
    out.set(r.key, { unit: r.unit, printedUnit: null });
    if (!r.instrumentId || !r.unit || !r.unit.trim() || checkUnit(r.unit).ok) continue;
    const pair = `${r.instrumentId}\u0000${r.unit}`;
    const seen = unknown.get(pair) ?? { instrumentId: r.instrumentId, printed: r.unit, count: 0 };
    seen.count++;
    unknown.set(pair, seen);
  }
  if (!unknown.size) return out;
  const rows = await tx
    .insert(instrumentUnits)
    .values([...unknown.values()].map((u) => ({ clinicId, instrumentId: u.instrumentId, printed: u.printed, readingCount: u.count })))
    .onConflictDoUpdate({
      target: [instrumentUnits.instrumentId, instrumentUnits.printed],
      set: { readingCount: sql`${instrumentUnits.readingCount} + excluded.reading_count`, lastSeenAt: sql`now()` },
    })
    .returning({ instrumentId: instrumentUnits.instrumentId, printed: instrumentUnits.printed, ucum: instrumentUnits.ucum });
  const mapped = new Map(rows.filter((r) => r.ucum).map((r) => [`${r.instrumentId}\u0000${r.printed}`, r.ucum as string]));
  for (const r of readings) {
    const ucum = r.instrumentId && r.unit ? mapped.get(`${r.instrumentId}\u0000${r.unit}`) : undefined;
    if (ucum) out.set(r.key, { unit: ucum, printedUnit: r.unit });
  }
  return out;
}

/** Admin → Units: every unit an instrument printed that UCUM cannot read, with its mapping. */
export async function listInstrumentUnits(actor: Actor) {
  requirePermission(actor, 'manageClinic');
  const database = await db();
  return database
    .select({
      id: instrumentUnits.id,
      instrumentId: instrumentUnits.instrumentId,
      instrumentName: instruments.name,
      instrumentCode: instruments.code,
      printed: instrumentUnits.printed,
      ucum: instrumentUnits.ucum,
      readingCount: instrumentUnits.readingCount,
      firstSeenAt: instrumentUnits.firstSeenAt,
      lastSeenAt: instrumentUnits.lastSeenAt,
      mappedAt: instrumentUnits.mappedAt,
      mappedByName: staffUsers.displayName,
    })
    .from(instrumentUnits)
    .innerJoin(instruments, eq(instruments.id, instrumentUnits.instrumentId))
    .leftJoin(staffUsers, eq(staffUsers.id, instrumentUnits.mappedBy))
    .where(eq(instrumentUnits.clinicId, actor.clinicId))
    .orderBy(asc(instruments.name), asc(instrumentUnits.printed));
}

/**
 * Maps a printed unit to a UCUM unit (or removes the mapping with null). It applies to readings that arrive
 * afterwards; those already stored keep what they arrived with, so no result changes meaning behind a
 * person's back.
 */
export async function mapInstrumentUnit(actor: Actor, unitId: string, input: UnitMappingInput) {
  requirePermission(actor, 'manageClinic');
  let ucum: string | null = null;
  if (input.ucum !== null) {
    const check = checkUnit(input.ucum);
    if (!check.ok) throw new ApiError(400, 'invalid_unit', check.message, [{ path: 'ucum', message: check.message }]);
    ucum = check.ucum;
  }
  const database = await db();
  return database.transaction(async (tx) => {
    const [before] = await tx
      .select()
      .from(instrumentUnits)
      .where(and(eq(instrumentUnits.id, unitId), eq(instrumentUnits.clinicId, actor.clinicId)))
      .for('update');
    if (!before) throw notFound('The unit');
    const [row] = await tx
      .update(instrumentUnits)
      .set({ ucum, mappedBy: ucum ? actor.userId : null, mappedAt: ucum ? new Date() : null })
      .where(eq(instrumentUnits.id, unitId))
      .returning();
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: ucum ? 'unit.mapped' : 'unit.unmapped',
      entityType: 'instrument_unit',
      entityId: unitId,
      details: { instrumentId: before.instrumentId, printed: before.printed, before: before.ucum, after: ucum },
    });
    await publish(tx, { type: 'settings.updated', clinicId: actor.clinicId, id: unitId });
    return row;
  });
}
