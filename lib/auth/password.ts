import 'server-only';
import { randomBytes, scrypt as scryptCb, timingSafeEqual, type ScryptOptions } from 'node:crypto';

/** scrypt (RFC 7914) as a promise; the one key derivation used for hashing and checking. */
export const scrypt = (password: string, salt: Buffer, keylen: number, options: ScryptOptions) =>
  new Promise<Buffer>((resolve, reject) =>
    scryptCb(password, salt, keylen, options, (err, key) => (err ? reject(err) : resolve(key))),
  );

// scrypt with N=2^15, r=8, p=1 (RFC 7914 parameters; OWASP's password storage guidance lists N=2^17 as a
// minimum for interactive logins in 2023 — from memory — we use 2^15 so a 2-core lab PC signs in fast; raise later).
const N = 2 ** 15;
const R = 8;
const P = 1;
const KEYLEN = 32;
const MAXMEM = 128 * N * R * 2;

export async function hashPassword(password: string): Promise<string> {
  const salt = randomBytes(16);
  const key = await scrypt(password.normalize('NFKC'), salt, KEYLEN, { N, r: R, p: P, maxmem: MAXMEM });
  return ['scrypt', N, R, P, salt.toString('base64'), key.toString('base64')].join('$');
}

/** Cost settings a stored hash may name: ours, and stronger ones a later release may use. */
const ACCEPTED_N = new Set([2 ** 15, 2 ** 16, 2 ** 17]);

export async function verifyPassword(password: string, stored: string): Promise<boolean> {
  const [kind, n, r, p, salt, hash, ...rest] = stored.split('$');
  const N = Number(n);
  // Never let the stored value choose a weak or empty check: fixed key length, known cost only.
  if (kind !== 'scrypt' || rest.length || !ACCEPTED_N.has(N) || r !== String(R) || p !== String(P) || !salt || !hash) {
    return false;
  }
  const expected = Buffer.from(hash, 'base64');
  const saltBytes = Buffer.from(salt, 'base64');
  if (expected.length !== KEYLEN || saltBytes.length < 16) return false;
  const key = await scrypt(password.normalize('NFKC'), saltBytes, KEYLEN, { N, r: R, p: P, maxmem: 128 * N * R * 2 });
  return timingSafeEqual(key, expected);
}

/** A hash to compare against when the e-mail is unknown, so timing does not reveal which addresses exist. */
let decoy: Promise<string> | undefined;
export const decoyHash = () => (decoy ??= hashPassword(randomBytes(12).toString('hex')));
