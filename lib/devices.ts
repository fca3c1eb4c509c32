import 'server-only';
import { and, asc, eq, isNull } from 'drizzle-orm';
import { db } from '@/db/client';
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
