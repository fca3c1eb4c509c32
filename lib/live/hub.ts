import 'server-only';
import type { IncomingMessage } from 'node:http';
import type { Duplex } from 'node:stream';
import { WebSocketServer, type WebSocket } from 'ws';
import { actorFromSeal } from '@/lib/auth/guards';
import { SESSION_COOKIE, cookieValue, unsealSession } from '@/lib/auth/session';
import { crossSiteReason } from '@/lib/origin';
import { subscribe, subscribeSessionEnded } from './bus';
import type { LiveEvent } from './events';

export const LIVE_PATH = '/api/live';
const PING_MS = 25_000;

interface Member {
  socket: WebSocket;
  userId: string;
  sessionId?: string;
  alive: boolean;
}

/**
 * The WebSocket side of the live feed: authenticates each upgrade with the session cookie and sends a
 * clinic's events to that clinic's room only.
 */
export async function createLiveHub() {
  const wss = new WebSocketServer({ noServer: true, maxPayload: 4096 });
  const rooms = new Map<string, Set<Member>>();

  const unsubscribe = await subscribe((event: LiveEvent) => {
    const room = rooms.get(event.clinicId);
    if (!room) return;
    const message = JSON.stringify(event);
    for (const member of room) member.socket.send(message);
  });

  // Sign-out ends that session's feed; deactivation ends all of the person's.
  const unsubscribeSessions = await subscribeSessionEnded((ended) => {
    for (const room of rooms.values()) {
      for (const member of room) {
        if (member.userId === ended.userId && (!ended.sessionId || member.sessionId === ended.sessionId)) {
          member.socket.close(4401, 'session ended');
        }
      }
    }
  });

  const pinger = setInterval(() => {
    for (const room of rooms.values()) {
      for (const member of room) {
        if (!member.alive) {
          member.socket.terminate();
          continue;
        }
        member.alive = false;
        member.socket.ping();
      }
    }
  }, PING_MS);
  pinger.unref();

  function refuse(socket: Duplex, status: number, reason: string) {
    socket.end(`HTTP/1.1 ${status} ${reason}\r\nConnection: close\r\nContent-Length: 0\r\n\r\n`);
  }

  async function handleUpgrade(request: IncomingMessage, socket: Duplex, head: Buffer) {
    socket.on('error', () => socket.destroy());
    // Browsers always send Origin on a WebSocket handshake (RFC 6455 §4.1): only our own pages may open the feed.
    const headers = { get: (name: string) => { const v = request.headers[name]; return v === undefined ? null : String(v); } };
    if (crossSiteReason(headers)) return refuse(socket, 403, 'Forbidden');
    const seal = cookieValue(request.headers.cookie, SESSION_COOKIE);
    let actor: Awaited<ReturnType<typeof actorFromSeal>> = null;
    try {
      actor = await actorFromSeal(seal);
    } catch (error) {
      // One bad upgrade must never take the server down.
      console.error('[benchwire] live feed: could not check a session', error);
    }
    if (!actor) return refuse(socket, 401, 'Unauthorized');
    // A temporary password must be changed before anything else, the live feed included.
    if (actor.mustChangePassword) return refuse(socket, 403, 'Forbidden');
    const sessionId = (await unsealSession(seal))?.sessionId;
    wss.handleUpgrade(request, socket, head, (ws) => {
      const member: Member = { socket: ws, userId: actor.userId, sessionId, alive: true };
      // A frame over maxPayload (or any protocol error) closes this socket; it must not become an uncaught error.
      ws.on('error', () => ws.terminate());
      const room = rooms.get(actor.clinicId) ?? new Set<Member>();
      rooms.set(actor.clinicId, room);
      room.add(member);
      ws.on('pong', () => (member.alive = true));
      // The feed is one-way; anything a browser sends is ignored.
      ws.on('close', () => {
        room.delete(member);
        if (room.size === 0) rooms.delete(actor.clinicId);
      });
      ws.send(JSON.stringify({ type: 'hello', at: new Date().toISOString() }));
    });
  }

  async function close() {
    clearInterval(pinger);
    await unsubscribe();
    await unsubscribeSessions();
    for (const room of rooms.values()) for (const m of room) m.socket.terminate();
    rooms.clear();
    await new Promise<void>((resolve) => wss.close(() => resolve()));
  }

  return { handleUpgrade, close, connections: () => [...rooms.values()].reduce((n, r) => n + r.size, 0) };
}
