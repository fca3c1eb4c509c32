import 'server-only';
import { createHash } from 'node:crypto';
import { and, asc, desc, eq, inArray } from 'drizzle-orm';
import { db } from '@/db/client';
import { instruments, labOrders, patients, printoutProfiles, type Bridge } from '@/db/schema';
import type { BridgeWorklist } from '@/lib/validation/readings';

/**
 * What a bridge should run: the active instruments assigned to it, with their link settings and,
 * for profile-read instruments, the latest profile version. `version` changes whenever any of it does,
 * so the bridge can poll cheaply and reconfigure without a restart.
 */
export async function bridgeConfig(bridge: Bridge) {
  const database = await db();
  const rows = await database
    .select()
    .from(instruments)
    .where(and(eq(instruments.clinicId, bridge.clinicId), eq(instruments.bridgeId, bridge.id), eq(instruments.active, true)))
    .orderBy(instruments.code);
  const profileKeys = [...new Set(rows.map((r) => r.profileId).filter((k): k is string => !!k))];
  const profiles = profileKeys.length
    ? await database
        .select()
        .from(printoutProfiles)
        .where(and(eq(printoutProfiles.clinicId, bridge.clinicId), inArray(printoutProfiles.profileKey, profileKeys)))
        .orderBy(desc(printoutProfiles.version))
    : [];
  const latest = new Map<string, (typeof profiles)[number]>();
  for (const p of profiles) if (!latest.has(p.profileKey)) latest.set(p.profileKey, p);

  const body = {
    bridge: { id: bridge.id, name: bridge.name },
    instruments: rows.map((r) => {
      const profile = r.profileId ? latest.get(r.profileId) : undefined;
      return {
        code: r.code,
        name: r.name,
        dialect: r.dialect,
        analytes: r.analytes,
        connection: r.connection,
        read: r.readSettings,
        profile: profile ? { key: profile.profileKey, version: profile.version, definition: profile.definition } : null,
      };
    }),
  };
  const version = createHash('sha256').update(JSON.stringify(body)).digest('hex').slice(0, 16);
  return { version, ...body };
}

/** Open tests on the bridge's instruments (the worklist an analyzer may ask for), oldest due first. */
export async function bridgeWorklist(bridge: Bridge): Promise<BridgeWorklist> {
  const database = await db();
  const rows = await database
    .select({
      instrument: instruments.code,
      analyte: labOrders.analyte,
      sampleId: labOrders.sampleId,
      recordNumber: patients.recordNumber,
      startedAt: labOrders.startedAt,
      dueAt: labOrders.dueAt,
    })
    .from(labOrders)
    .innerJoin(instruments, eq(instruments.id, labOrders.instrumentId))
    .innerJoin(patients, eq(patients.id, labOrders.patientId))
    .where(and(eq(labOrders.clinicId, bridge.clinicId), eq(labOrders.status, 'open'), eq(instruments.bridgeId, bridge.id), eq(instruments.active, true)))
    .orderBy(asc(labOrders.dueAt))
    .limit(500);
  return { items: rows.map((r) => ({ ...r, startedAt: r.startedAt.toISOString(), dueAt: r.dueAt.toISOString() })) };
}
