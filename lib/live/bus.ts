import 'server-only';
import { sql } from 'drizzle-orm';
import type { Executor } from '@/db/client';
import { getDatabase } from '@/db/client';
import { LIVE_CHANNEL, LIVE_EVENT_TYPES, type LiveEvent } from './events';

/**
 * Publishes through PostgreSQL NOTIFY inside the caller's transaction: the event goes out only if the
 * change commits, and every app instance on the same database hears it.
 */
export async function publish(tx: Executor, event: Omit<LiveEvent, 'at'> & { at?: string }): Promise<void> {
  const full: LiveEvent = { ...event, at: event.at ?? new Date().toISOString() };
  await tx.execute(sql`select pg_notify(${LIVE_CHANNEL}, ${JSON.stringify(full)})`);
}

/**
 * PostgreSQL refuses a NOTIFY payload of 8,000 bytes or more; 150 UUIDs (5.9 kB) leave room for the rest,
 * so a full 200-record batch goes out as two notifications, a smaller one as one.
 */
export const IDS_PER_NOTIFY = 150;

/** One event for many new rows of one kind (a bridge's batch), published like publish(). */
export async function publishBatch(tx: Executor, event: Pick<LiveEvent, 'type' | 'clinicId'>, ids: string[]): Promise<void> {
  const at = new Date().toISOString();
  for (let i = 0; i < ids.length; i += IDS_PER_NOTIFY) {
    const chunk = ids.slice(i, i + IDS_PER_NOTIFY);
    await publish(tx, { ...event, id: chunk[0], ids: chunk, at });
  }
}

export function parseLiveEvent(payload: string): LiveEvent | null {
  try {
    const event = JSON.parse(payload) as LiveEvent;
    if (typeof event.clinicId !== 'string' || !LIVE_EVENT_TYPES.includes(event.type)) return null;
    return event;
  } catch {
    return null;
  }
}

/** LISTENs for events; returns the unsubscribe function. */
export async function subscribe(onEvent: (event: LiveEvent) => void): Promise<() => Promise<void>> {
  const database = await getDatabase();
  return database.listen(LIVE_CHANNEL, (payload) => {
    const event = parseLiveEvent(payload);
    if (event) onEvent(event);
  });
}

/** Sessions ended (sign-out) or people deactivated: the live feed closes their open sockets, on every instance. */
export const SESSION_CHANNEL = 'benchwire_sessions';
export interface SessionEnded {
  userId: string;
  /** One session (sign-out); absent: every session of the person (deactivated). */
  sessionId?: string;
}

export async function publishSessionEnded(tx: Executor, ended: SessionEnded): Promise<void> {
  await tx.execute(sql`select pg_notify(${SESSION_CHANNEL}, ${JSON.stringify(ended)})`);
}

export async function subscribeSessionEnded(onEnded: (ended: SessionEnded) => void): Promise<() => Promise<void>> {
  const database = await getDatabase();
  return database.listen(SESSION_CHANNEL, (payload) => {
    try {
      const ended = JSON.parse(payload) as SessionEnded;
      if (typeof ended.userId === 'string') onEnded(ended);
    } catch {
      // not ours
    }
  });
}
