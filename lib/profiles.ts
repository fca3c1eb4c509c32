import 'server-only';
import { randomUUID } from 'node:crypto';
import { and, desc, eq, sql } from 'drizzle-orm';
import { db } from '@/db/client';
import { instruments, printoutProfiles, staffUsers } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { recordAudit } from '@/lib/audit';
import { notFound } from '@/lib/http';
import type { ProfileDefinition } from '@/lib/validation/profile';

/** Each profile's latest version, with how many instruments read with it. */
export async function listProfiles(actor: Actor) {
  const database = await db();
  const rows = await database
    .selectDistinctOn([printoutProfiles.profileKey], {
      key: printoutProfiles.profileKey,
      name: printoutProfiles.name,
      version: printoutProfiles.version,
      definition: printoutProfiles.definition,
      createdAt: printoutProfiles.createdAt,
      createdByName: staffUsers.displayName,
    })
    .from(printoutProfiles)
    .leftJoin(staffUsers, eq(staffUsers.id, printoutProfiles.createdBy))
    .where(eq(printoutProfiles.clinicId, actor.clinicId))
    .orderBy(printoutProfiles.profileKey, desc(printoutProfiles.version));
  const usage = await database
    .select({ key: instruments.profileId, n: sql<number>`count(*)::int` })
    .from(instruments)
    .where(and(eq(instruments.clinicId, actor.clinicId), eq(instruments.dialect, 'profile')))
    .groupBy(instruments.profileId);
  const used = new Map(usage.map((u) => [u.key, u.n]));
  return rows
    .map((r) => ({ ...r, analyzer: String(r.definition.analyzer ?? ''), instrumentCount: used.get(r.key) ?? 0 }))
    .sort((a, b) => a.name.localeCompare(b.name));
}

/** One profile: every version, newest first. */
export async function getProfile(actor: Actor, key: string) {
  const database = await db();
  const versions = await database
    .select({
      version: printoutProfiles.version,
      name: printoutProfiles.name,
      definition: printoutProfiles.definition,
      createdAt: printoutProfiles.createdAt,
      createdByName: staffUsers.displayName,
    })
    .from(printoutProfiles)
    .leftJoin(staffUsers, eq(staffUsers.id, printoutProfiles.createdBy))
    .where(and(eq(printoutProfiles.clinicId, actor.clinicId), eq(printoutProfiles.profileKey, key)))
    .orderBy(desc(printoutProfiles.version));
  if (versions.length === 0) throw notFound('The printout profile');
  return { key, name: versions[0].name, latest: versions[0], versions };
}

/** Saves a profile as a new version (version 1 for a new profile); earlier versions stay as they were. */
export async function saveProfileVersion(actor: Actor, input: { key?: string; name: string; definition: ProfileDefinition }) {
  const database = await db();
  return database.transaction(async (tx) => {
    let version = 1;
    const key = input.key ?? randomUUID();
    if (input.key) {
      const [current] = await tx
        .select({ version: printoutProfiles.version })
        .from(printoutProfiles)
        .where(and(eq(printoutProfiles.clinicId, actor.clinicId), eq(printoutProfiles.profileKey, input.key)))
        .orderBy(desc(printoutProfiles.version))
        .limit(1)
        .for('update');
      if (!current) throw notFound('The printout profile');
      version = current.version + 1;
    }
    const [row] = await tx
      .insert(printoutProfiles)
      .values({ clinicId: actor.clinicId, profileKey: key, name: input.name, version, definition: input.definition, createdBy: actor.userId })
      .returning();
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: version === 1 ? 'profile.created' : 'profile.revised',
      entityType: 'printout_profile',
      entityId: key,
      details: { name: input.name, version },
    });
    return { key, name: row.name, version: row.version, createdAt: row.createdAt };
  });
}
