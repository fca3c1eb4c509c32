import 'server-only';
import type { Executor } from '@/db/client';
import { auditEvents } from '@/db/schema';

export interface AuditEntry {
  clinicId: string;
  actorUserId?: string | null;
  actorBridgeId?: string | null;
  action: string;
  entityType: string;
  entityId: string;
  details?: Record<string, unknown>;
}

/** Appends to the audit trail; call it inside the transaction that makes the change. */
export async function recordAudit(tx: Executor, entry: AuditEntry): Promise<void> {
  await tx.insert(auditEvents).values({ ...entry, details: entry.details ?? {} });
}
