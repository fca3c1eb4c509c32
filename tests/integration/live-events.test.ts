import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import WebSocket from 'ws';
import {
  OTHER_CLINIC_PASSWORD,
  body,
  createOtherClinic,
  ingest,
  ingestOne,
  patientByRecord,
  readingRecord,
  unparsedRecord,
  waitForEvent,
} from './support';
import { POST as assignRoute } from '@/app/api/readings/[readingId]/assign/route';
import { POST as voidRoute } from '@/app/api/readings/[readingId]/void/route';
import type { Database } from '@/db/client';
import { publish, subscribe } from '@/lib/live/bus';
import type { LiveEvent } from '@/lib/live/events';
import { createLiveHub } from '@/lib/live/hub';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

let database: Database;
let token: string;
let clinicId: string;
let techCookie: string;
const events: LiveEvent[] = [];
let unsubscribe: () => Promise<void>;

beforeAll(async () => {
  ({ database, bridgeToken: token, clinicId } = await seededDatabase());
  techCookie = await signIn('tech@fernhollow.example');
  unsubscribe = await subscribe((event) => events.push(event));
});

afterAll(async () => {
  await unsubscribe?.();
});

const assign = (readingId: string, patientId: string) =>
  assignRoute(request('/api/readings/x/assign', { cookie: techCookie, body: { patientId } }), params({ readingId }));

/**
 * Waits until everything committed so far has been delivered: notifications arrive in commit order
 * (PostgreSQL docs, NOTIFY: "notifications from different transactions will be delivered in the order
 * in which the transactions were committed" — from memory), so once a marker committed now has
 * arrived, any earlier event would have arrived too. Used to show an event was NOT published.
 */
async function flush() {
  const markerId = crypto.randomUUID();
  await database.db.transaction((tx) => publish(tx, { type: 'capture.updated', clinicId, id: markerId }));
  await waitForEvent(events, (e) => e.id === markerId);
}

describe('the live bus', () => {
  it('ingest publishes reading.created with the clinic and the reading id', async () => {
    const id = await ingestOne(token, 'live-00000001');
    const event = await waitForEvent(events, (e) => e.id === id);
    expect(event).toMatchObject({ type: 'reading.created', clinicId, id });
    expect(Number.isNaN(Date.parse(event.at))).toBe(false);
  });

  it('a full 200-record batch is announced in two notifications that carry every new id', async () => {
    // PostgreSQL docs, NOTIFY: the payload "must be shorter than 8000 bytes" — from memory, verify;
    // 200 UUIDs do not fit in one, so the batch is split (lib/live/bus.ts IDS_PER_NOTIFY).
    const records = Array.from({ length: 200 }, (_, i) => readingRecord(`live-batch-${String(i).padStart(4, '0')}`));
    const { results } = await body(await ingest(token, records));
    const ids = new Set(results.map((r: { id: string }) => r.id));
    const heard = new Set<string>();
    let notifications = 0;
    await vi.waitFor(() => {
      notifications = 0;
      heard.clear();
      for (const e of events) {
        if (e.type !== 'reading.created' || !e.ids?.some((x) => ids.has(x))) continue;
        notifications += 1;
        expect(e.id).toBe(e.ids[0]);
        for (const x of e.ids) heard.add(x);
      }
      expect(heard.size).toBe(200);
    });
    expect([...heard].every((x) => ids.has(x))).toBe(true);
    expect(notifications).toBe(2);
  });

  it('an unparsed fragment publishes capture.created', async () => {
    const { results } = await body(await ingest(token, [unparsedRecord('live-00000002', 'noise', 'no RESULT line')]));
    await waitForEvent(events, (e) => e.type === 'capture.created' && e.id === results[0].id && e.clinicId === clinicId);
  });

  it('a resent record publishes nothing new', async () => {
    const id = await ingestOne(token, 'live-00000003');
    await waitForEvent(events, (e) => e.id === id);
    await ingestOne(token, 'live-00000003');
    await flush();
    expect(events.filter((e) => e.id === id)).toHaveLength(1);
  });

  it('assign publishes reading.assigned with the patient id', async () => {
    const id = await ingestOne(token, 'live-00000004');
    const patient = await patientByRecord(database.db, clinicId, 'FH-1004');
    expect((await assign(id, patient.id)).status).toBe(200);
    const event = await waitForEvent(events, (e) => e.type === 'reading.assigned' && e.id === id);
    expect(event).toMatchObject({ clinicId, patientId: patient.id });
  });

  it('void publishes reading.voided', async () => {
    const id = await ingestOne(token, 'live-00000005');
    const response = await voidRoute(request('/api/readings/x/void', { cookie: techCookie, body: { reason: 'control run' } }), params({ readingId: id }));
    expect(response.status).toBe(200);
    await waitForEvent(events, (e) => e.type === 'reading.voided' && e.id === id && e.clinicId === clinicId);
  });

  it('a failed assignment (unknown patient → 404) publishes nothing', async () => {
    const id = await ingestOne(token, 'live-00000006');
    const response = await assign(id, crypto.randomUUID());
    expect(response.status).toBe(404);
    await flush();
    expect(events.filter((e) => e.type === 'reading.assigned' && e.id === id)).toEqual([]);
  });

  it('an event published inside a transaction that rolls back is never delivered', async () => {
    // PostgreSQL docs, NOTIFY: "if a NOTIFY is executed inside a transaction, the notify events are not
    // delivered until and unless the transaction is committed" (from memory).
    const ghost = crypto.randomUUID();
    await expect(
      database.db.transaction(async (tx) => {
        await publish(tx, { type: 'reading.created', clinicId, id: ghost });
        throw new Error('roll back');
      }),
    ).rejects.toThrow('roll back');
    await flush();
    expect(events.filter((e) => e.id === ghost)).toEqual([]);
  });

  it('ignores NOTIFY payloads on the channel that are not live events', async () => {
    const { sql } = await import('drizzle-orm');
    const { LIVE_CHANNEL } = await import('@/lib/live/events');
    await database.db.execute(sql`select pg_notify(${LIVE_CHANNEL}, 'not json')`);
    await database.db.execute(sql`select pg_notify(${LIVE_CHANNEL}, ${JSON.stringify({ type: 'reading.deleted', clinicId, id: 'x' })})`);
    await flush();
    expect(events.filter((e) => (e.type as string) === 'reading.deleted')).toEqual([]);
  });
});

describe('the WebSocket hub (/api/live)', () => {
  let server: Server;
  let hub: Awaited<ReturnType<typeof createLiveHub>>;
  let url: string;
  const sockets: WebSocket[] = [];

  beforeAll(async () => {
    hub = await createLiveHub();
    server = createServer((_req, res) => res.writeHead(404).end());
    server.on('upgrade', (req, socket, head) => void hub.handleUpgrade(req, socket, head));
    await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
    url = `ws://127.0.0.1:${(server.address() as AddressInfo).port}/api/live`;
  });

  afterAll(async () => {
    for (const s of sockets) s.terminate();
    await hub?.close();
    await new Promise<void>((resolve) => (server ? server.close(() => resolve()) : resolve()));
  });

  /** Connects with a cookie and collects every message; resolves once the hub said hello. */
  async function connect(cookie: string) {
    const messages: { type: string; id?: string; clinicId?: string }[] = [];
    const socket = new WebSocket(url, { headers: { cookie } });
    sockets.push(socket);
    socket.on('message', (data) => messages.push(JSON.parse(String(data))));
    await vi.waitFor(() => expect(messages[0]?.type).toBe('hello'), { timeout: 15_000, interval: 20 });
    return messages;
  }

  const waitForMessage = (messages: { id?: string }[], id: string) =>
    vi.waitFor(() => expect(messages.map((m) => m.id)).toContain(id), { timeout: 15_000, interval: 20 });

  it('refuses an upgrade without a session with 401 (RFC 6455 §4.2.2: any non-101 status refuses)', async () => {
    const status = await new Promise<number>((resolve, reject) => {
      const socket = new WebSocket(url);
      sockets.push(socket);
      socket.on('unexpected-response', (_req, res) => resolve(res.statusCode ?? 0));
      socket.on('open', () => reject(new Error('upgrade was accepted')));
      socket.on('error', () => {});
    });
    expect(status).toBe(401);
  });

  it("sends each clinic's events to that clinic's staff only", async () => {
    const other = await createOtherClinic(database.db);
    const ours = await connect(techCookie);
    const theirs = await connect(await signIn(other.tech.email, OTHER_CLINIC_PASSWORD));

    const a1 = await ingestOne(token, 'hub-00000001');
    await waitForMessage(ours, a1);
    const b1 = await ingestOne(other.bridgeToken, 'hub-00000001');
    await waitForMessage(theirs, b1);
    const a2 = await ingestOne(token, 'hub-00000002');
    await waitForMessage(ours, a2);
    const b2 = await ingestOne(other.bridgeToken, 'hub-00000002');
    await waitForMessage(theirs, b2);

    // Each socket has seen a later event of its own clinic, so anything sent earlier has arrived (one TCP stream).
    expect(ours.filter((m) => m.type !== 'hello').every((m) => m.clinicId === clinicId)).toBe(true);
    expect(theirs.filter((m) => m.type !== 'hello').every((m) => m.clinicId === other.clinic.id)).toBe(true);
    expect(ours.map((m) => m.id)).not.toContain(b1);
    expect(theirs.map((m) => m.id)).not.toContain(a1);
    expect(theirs.map((m) => m.id)).not.toContain(a2);
  });
});
