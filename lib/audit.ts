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

/** Appends many entries in one multi-row INSERT (a bridge's batch); same rules as recordAudit. */
export async function recordAudits(tx: Executor, entries: AuditEntry[]): Promise<void> {
  if (!entries.length) return;
  await tx.insert(auditEvents).values(entries.map((entry) => ({ ...entry, details: entry.details ?? {} })));
}
