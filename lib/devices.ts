import 'server-only';
import { and, asc, eq, isNull } from 'drizzle-orm';
import { db, type Tx } from '@/db/client';
import { bridges, instruments, printoutProfiles, type Bridge } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { newBridgeToken } from '@/lib/auth/tokens';
import { recordAudit } from '@/lib/audit';
import { ApiError, notFound } from '@/lib/http';
import { publish } from '@/lib/live/bus';
import { isUniqueViolation } from '@/lib/staff';
import type { BridgeHeartbeat } from '@/lib/validation/readings';
import type { NewInstrumentInput } from '@/lib/validation/api';

const bridgeColumns = {
  id: bridges.id,
  name: bridges.name,
  tokenHint: bridges.tokenHint,
  createdAt: bridges.createdAt,
  revokedAt: bridges.revokedAt,
  lastSeenAt: bridges.lastSeenAt,
  lastHeartbeat: bridges.lastHeartbeat,
};

export async function listBridges(actor: Actor) {
  const database = await db();
  return database.select(bridgeColumns).from(bridges).where(eq(bridges.clinicId, actor.clinicId)).orderBy(asc(bridges.name));
}

/** Creates a bridge and returns its token: the only time the token is ever shown. */
export async function createBridge(actor: Actor, name: string) {
  const database = await db();
  const { token, hash, hint } = newBridgeToken();
  return database.transaction(async (tx) => {
    const [bridge] = await tx
      .insert(bridges)
      .values({ clinicId: actor.clinicId, name, tokenHash: hash, tokenHint: hint, createdBy: actor.userId })
      .returning(bridgeColumns);
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'bridge.created',
      entityType: 'bridge',
      entityId: bridge.id,
      details: { name },
    });
    return { bridge, token };
  });
}

export async function revokeBridge(actor: Actor, bridgeId: string) {
  const database = await db();
  return database.transaction(async (tx) => {
    const [bridge] = await tx
      .update(bridges)
      .set({ revokedAt: new Date() })
      .where(and(eq(bridges.id, bridgeId), eq(bridges.clinicId, actor.clinicId), isNull(bridges.revokedAt)))
      .returning(bridgeColumns);
    if (!bridge) throw notFound('An active bridge with this id');
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'bridge.revoked',
      entityType: 'bridge',
      entityId: bridgeId,
    });
    return bridge;
  });
}

/** Keeps the bridge's last word and each instrument's link health (shown to admins, warnings included). */
export async function recordHeartbeat(bridge: Pick<Bridge, 'id' | 'clinicId'>, heartbeat: BridgeHeartbeat) {
  const database = await db();
  const at = new Date().toISOString();
  await database.transaction(async (tx) => {
    await tx
      .update(bridges)
      .set({ lastSeenAt: new Date(), lastHeartbeat: { ...heartbeat, at } })
      .where(eq(bridges.id, bridge.id));
    for (const source of heartbeat.sources) {
      await tx
        .update(instruments)
        .set({ health: { ...source, at, bridgeId: bridge.id } })
        .where(and(eq(instruments.clinicId, bridge.clinicId), eq(instruments.code, source.instrument)));
    }
    // Lab quality: the instruments page shows link health live.
    await publish(tx, { type: 'instrument.health', clinicId: bridge.clinicId, id: bridge.id });
  });
}

export async function listInstruments(actor: Actor) {
  const database = await db();
  return database
    .select({
      id: instruments.id,
      code: instruments.code,
      name: instruments.name,
      analytes: instruments.analytes,
      dialect: instruments.dialect,
      connection: instruments.connection,
      serialNumber: instruments.serialNumber,
      active: instruments.active,
      bridgeId: instruments.bridgeId,
      bridgeName: bridges.name,
      profileId: instruments.profileId,
      readSettings: instruments.readSettings,
      health: instruments.health,
    })
    .from(instruments)
    .leftJoin(bridges, eq(bridges.id, instruments.bridgeId))
    .where(eq(instruments.clinicId, actor.clinicId))
    .orderBy(asc(instruments.name));
}

export async function addInstrument(actor: Actor, input: NewInstrumentInput) {
  const database = await db();
  try {
    return await database.transaction(async (tx) => {
      await checkInstrumentLinks(tx, actor, input);
      const [instrument] = await tx
        .insert(instruments)
        .values({ ...input, clinicId: actor.clinicId, connection: input.connection ?? null })
        .returning();
      await recordAudit(tx, {
        clinicId: actor.clinicId,
        actorUserId: actor.userId,
        action: 'instrument.added',
        entityType: 'instrument',
        entityId: instrument.id,
        details: { code: instrument.code, dialect: instrument.dialect },
      });
      return instrument;
    });
  } catch (error) {
    if (isUniqueViolation(error)) {
      throw new ApiError(409, 'code_taken', 'Another instrument already uses this code.', [
        { path: 'code', message: 'Already in use.' },
      ]);
    }
    throw error;
  }
}

/** The bridge and printout profile an instrument names must be the clinic's; 400 on the field otherwise. */
async function checkInstrumentLinks(tx: Tx, actor: Actor, input: NewInstrumentInput) {
  if (input.bridgeId) {
    const [bridge] = await tx
      .select({ id: bridges.id })
      .from(bridges)
      .where(and(eq(bridges.id, input.bridgeId), eq(bridges.clinicId, actor.clinicId)));
    if (!bridge) throw new ApiError(400, 'invalid_request', 'That bridge is not one of this clinic’s.', [
      { path: 'bridgeId', message: 'Unknown bridge.' },
    ]);
  }
  if (input.profileId) {
    const [profile] = await tx
      .select({ key: printoutProfiles.profileKey })
      .from(printoutProfiles)
      .where(and(eq(printoutProfiles.profileKey, input.profileId), eq(printoutProfiles.clinicId, actor.clinicId)))
      .limit(1);
    if (!profile) throw new ApiError(400, 'invalid_request', 'That printout profile is not one of this clinic’s.', [
      { path: 'profileId', message: 'Unknown profile.' },
    ]);
  }
}

const instrumentEditable = (i: NewInstrumentInput) => ({
  name: i.name,
  analytes: i.analytes,
  dialect: i.dialect,
  serialNumber: i.serialNumber ?? null,
  bridgeId: i.bridgeId ?? null,
  profileId: i.profileId ?? null,
  // The number format and the name it answers as go to the bridge with its config (lib/bridge-config.ts).
  readSettings: i.readSettings,
  connection: i.connection ?? null,
});

/**
 * Saves an edited instrument. The code stays: bridges send it with every record (spooled ones too), so a
 * new code is a new instrument. The audit event lists what changed.
 */
export async function updateInstrument(actor: Actor, instrumentId: string, input: NewInstrumentInput) {
  const database = await db();
  return database.transaction(async (tx) => {
    const [before] = await tx
      .select()
      .from(instruments)
      .where(and(eq(instruments.id, instrumentId), eq(instruments.clinicId, actor.clinicId)))
      .for('update');
    if (!before) throw notFound('The instrument');
    if (input.code !== before.code) {
      throw new ApiError(400, 'invalid_request', 'The code cannot change: the bridge sends it with every reading. Add a new instrument instead.', [
        { path: 'code', message: `Keep “${before.code}”.` },
      ]);
    }
    await checkInstrumentLinks(tx, actor, input);
    const values = instrumentEditable(input);
    const changed = Object.keys(values).filter(
      (k) => JSON.stringify(before[k as keyof typeof values] ?? null) !== JSON.stringify(values[k as keyof typeof values] ?? null),
    );
    if (!changed.length) return before;
    const [instrument] = await tx.update(instruments).set(values).where(eq(instruments.id, instrumentId)).returning();
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'instrument.updated',
      entityType: 'instrument',
      entityId: instrumentId,
      details: { code: before.code, changed, before: Object.fromEntries(changed.map((k) => [k, before[k as keyof typeof before]])) },
    });
    return instrument;
  });
}

/**
 * Retires an instrument (the bridge stops reading it; it is offered for no new test) or returns it to
 * service. Nothing is deleted: its readings keep pointing at it, and late records from a bridge's spool
 * are still stored under it.
 */
export async function setInstrumentInService(actor: Actor, instrumentId: string, input: { active: boolean; reason: string }) {
  const database = await db();
  return database.transaction(async (tx) => {
    const [instrument] = await tx
      .update(instruments)
      .set({ active: input.active })
      .where(and(eq(instruments.id, instrumentId), eq(instruments.clinicId, actor.clinicId), eq(instruments.active, !input.active)))
      .returning();
    if (!instrument) {
      const [exists] = await tx.select({ id: instruments.id }).from(instruments).where(and(eq(instruments.id, instrumentId), eq(instruments.clinicId, actor.clinicId)));
      if (!exists) throw notFound('The instrument');
      throw new ApiError(409, 'unchanged', input.active ? 'This instrument is already in service.' : 'This instrument is already retired.');
    }
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: input.active ? 'instrument.returned_to_service' : 'instrument.retired',
      entityType: 'instrument',
      entityId: instrumentId,
      details: { code: instrument.code, reason: input.reason },
    });
    return instrument;
  });
}

/** Instruments whose link needs a person: disconnected, in error, or sending what looks like line noise. */
export async function instrumentsNeedingAttention(actor: Actor) {
  const database = await db();
  const rows = await database
    .select({ code: instruments.code, name: instruments.name, health: instruments.health })
    .from(instruments)
    .where(and(eq(instruments.clinicId, actor.clinicId), eq(instruments.active, true)));
  return rows.flatMap((row) => {
    const health = row.health as { state?: string; warnings?: string[]; detail?: string; at?: string } | null;
    if (!health?.state) return [];
    const problems = [...(health.warnings ?? [])];
    if (health.state === 'closed' || health.state === 'error') problems.unshift(health.detail ?? `link ${health.state}`);
    return problems.length ? [{ code: row.code, name: row.name, problems, at: health.at ?? null }] : [];
  });
}
