import 'server-only';
import { createHash, randomBytes } from 'node:crypto';

const PREFIX = 'bwb_';

/** A new bearer token: shown once to the admin, stored only as its hash. */
function newToken(prefix: string): { token: string; hash: string; hint: string } {
  const token = prefix + randomBytes(32).toString('base64url');
  return { token, hash: hashBridgeToken(token), hint: token.slice(0, prefix.length + 6) };
}

export const newBridgeToken = () => newToken(PREFIX);

/** For systems reading the FHIR API; hashed and looked up the same way as bridge tokens. */
export const newIntegrationToken = () => newToken('bwf_');

export function hashBridgeToken(token: string): string {
  return createHash('sha256').update(token, 'utf8').digest('hex');
}

export function bearerToken(request: Request): string | null {
  const header = request.headers.get('authorization') ?? '';
  const match = /^Bearer\s+(\S+)$/i.exec(header.trim());
  return match ? match[1] : null;
}
