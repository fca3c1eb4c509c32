import 'server-only';
import type { IncomingMessage } from 'node:http';
import type { Duplex } from 'node:stream';
import { WebSocketServer, type WebSocket } from 'ws';
import { actorFromSeal } from '@/lib/auth/guards';
import { SESSION_COOKIE, cookieValue } from '@/lib/auth/session';
import { subscribe } from './bus';
import type { LiveEvent } from './events';

export const LIVE_PATH = '/api/live';
const PING_MS = 25_000;

interface Member {
  socket: WebSocket;
  userId: string;
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
    let actor: Awaited<ReturnType<typeof actorFromSeal>> = null;
    try {
      actor = await actorFromSeal(cookieValue(request.headers.cookie, SESSION_COOKIE));
    } catch (error) {
      // One bad upgrade must never take the server down.
      console.error('[benchwire] live feed: could not check a session', error);
    }
    if (!actor) return refuse(socket, 401, 'Unauthorized');
    wss.handleUpgrade(request, socket, head, (ws) => {
      const member: Member = { socket: ws, userId: actor.userId, alive: true };
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
    for (const room of rooms.values()) for (const m of room) m.socket.terminate();
    rooms.clear();
    await new Promise<void>((resolve) => wss.close(() => resolve()));
  }

  return { handleUpgrade, close, connections: () => [...rooms.values()].reduce((n, r) => n + r.size, 0) };
}
