import 'server-only';
import { and, desc, eq, isNull } from 'drizzle-orm';
import { db } from '@/db/client';
import { integrationTokens } from '@/db/schema';
import { recordAudit } from '@/lib/audit';
import { requirePermission, type Actor } from '@/lib/auth/guards';
import { newIntegrationToken } from '@/lib/auth/tokens';
import { ApiError, notFound } from '@/lib/http';

// Tokens for systems that read results over FHIR: issued and revoked by an administrator, stored hashed.

export async function listIntegrations(actor: Actor) {
  requirePermission(actor, 'manageClinic');
  const database = await db();
  return database
    .select({ id: integrationTokens.id, name: integrationTokens.name, tokenHint: integrationTokens.tokenHint, createdAt: integrationTokens.createdAt, revokedAt: integrationTokens.revokedAt, lastUsedAt: integrationTokens.lastUsedAt })
    .from(integrationTokens)
    .where(eq(integrationTokens.clinicId, actor.clinicId))
    .orderBy(desc(integrationTokens.createdAt));
}

/** Returns the token once; only its hash is kept. */
export async function issueIntegrationToken(actor: Actor, name: string) {
  requirePermission(actor, 'manageClinic');
  const token = newIntegrationToken();
  const database = await db();
  return database.transaction(async (tx) => {
    const [row] = await tx.insert(integrationTokens).values({ clinicId: actor.clinicId, name, tokenHash: token.hash, tokenHint: token.hint, createdBy: actor.userId }).returning();
    await recordAudit(tx, { clinicId: actor.clinicId, actorUserId: actor.userId, action: 'integration.token-issued', entityType: 'integration', entityId: row.id, details: { name, hint: token.hint } });
    return { id: row.id, name, tokenHint: token.hint, token: token.token };
  });
}

export async function revokeIntegrationToken(actor: Actor, id: string) {
  requirePermission(actor, 'manageClinic');
  const database = await db();
  return database.transaction(async (tx) => {
    const [row] = await tx.select().from(integrationTokens).where(and(eq(integrationTokens.id, id), eq(integrationTokens.clinicId, actor.clinicId))).for('update');
    if (!row) throw notFound('The integration');
    if (row.revokedAt) throw new ApiError(409, 'already_revoked', 'This token is already revoked.');
    const [updated] = await tx.update(integrationTokens).set({ revokedAt: new Date() }).where(and(eq(integrationTokens.id, id), isNull(integrationTokens.revokedAt))).returning();
    await recordAudit(tx, { clinicId: actor.clinicId, actorUserId: actor.userId, action: 'integration.token-revoked', entityType: 'integration', entityId: id, details: { name: row.name } });
    return { id: updated.id, revokedAt: updated.revokedAt };
  });
}
