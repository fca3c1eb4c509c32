import 'server-only';
import { createHash, randomBytes } from 'node:crypto';

const PREFIX = 'bwb_';

/** A new bridge token: shown once to the admin, stored only as its hash. */
export function newBridgeToken(): { token: string; hash: string; hint: string } {
  const token = PREFIX + randomBytes(32).toString('base64url');
  return { token, hash: hashBridgeToken(token), hint: token.slice(0, PREFIX.length + 6) };
}

export function hashBridgeToken(token: string): string {
  return createHash('sha256').update(token, 'utf8').digest('hex');
}

export function bearerToken(request: Request): string | null {
  const header = request.headers.get('authorization') ?? '';
  const match = /^Bearer\s+(\S+)$/i.exec(header.trim());
  return match ? match[1] : null;
}
