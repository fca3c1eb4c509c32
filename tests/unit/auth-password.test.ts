import { scrypt } from 'node:crypto';
import { promisify } from 'node:util';
import { describe, expect, it } from 'vitest';
import { decoyHash, hashPassword, scrypt as benchwireScrypt, verifyPassword } from '@/lib/auth/password';

const scryptAsync = promisify(scrypt) as (pw: string, salt: Buffer, len: number, opts: object) => Promise<Buffer>;

// Stored form: scrypt$N$r$p$<salt base64>$<key base64> (lib/auth/password.ts).
const parse = (stored: string) => {
  const [kind, n, r, p, salt, key] = stored.split('$');
  return { kind, n: Number(n), r: Number(r), p: Number(p), salt: Buffer.from(salt, 'base64'), key: Buffer.from(key, 'base64') };
};
const withPart = (stored: string, index: number, value: string) => {
  const parts = stored.split('$');
  parts[index] = value;
  return parts.join('$');
};

describe('password hashing (scrypt)', () => {
  it('derives the RFC 7914 §12 test vector (scrypt "password"/"NaCl", N=1024, r=8, p=16, 64 bytes)', async () => {
    // RFC 7914 §12, second vector (from memory). verifyPassword itself only accepts our own cost settings.
    const dk =
      'fdbabe1c9d3472007856e7190d01e9fe7c6ad7cbc8237830e77376634b3731622eaf30d92e22a3886ff109279d9830dac727afb94a83ee6d8360cbdfa2cc0640';
    const key = await benchwireScrypt('password', Buffer.from('NaCl'), 64, { N: 1024, r: 8, p: 16 });
    expect(key.toString('hex')).toBe(dk);
    const stored = ['scrypt', 1024, 8, 16, Buffer.from('NaCl').toString('base64'), Buffer.from(dk, 'hex').toString('base64')].join('$');
    expect(await verifyPassword('password', stored)).toBe(false);
  });

  it('stores scrypt with a 16-byte salt and a 32-byte key that node:crypto reproduces', async () => {
    const stored = await hashPassword('correct horse battery');
    const { kind, n, r, p, salt, key } = parse(stored);
    expect(kind).toBe('scrypt');
    // RFC 7914 §2: N must be a power of two greater than 1.
    expect(Math.log2(n) % 1).toBe(0);
    expect(n).toBeGreaterThanOrEqual(2 ** 14);
    expect(salt).toHaveLength(16);
    expect(key).toHaveLength(32);
    // Independent computation with node:crypto's scrypt, same parameters.
    const expected = await scryptAsync('correct horse battery', salt, 32, { N: n, r, p, maxmem: 256 * n * r });
    expect(key.equals(expected)).toBe(true);
  });

  it('accepts the right password and refuses a wrong one', async () => {
    const stored = await hashPassword('correct horse battery');
    expect(await verifyPassword('correct horse battery', stored)).toBe(true);
    expect(await verifyPassword('correct horse batterY', stored)).toBe(false);
    expect(await verifyPassword('', stored)).toBe(false);
  });

  it('uses a fresh random salt, so the same password gives different hashes that both verify', async () => {
    const [a, b] = await Promise.all([hashPassword('same password here'), hashPassword('same password here')]);
    expect(a).not.toBe(b);
    expect(parse(a).salt.equals(parse(b).salt)).toBe(false);
    expect(await verifyPassword('same password here', a)).toBe(true);
    expect(await verifyPassword('same password here', b)).toBe(true);
  });

  it('refuses a stored hash whose key, salt or cost was tampered with', async () => {
    const stored = await hashPassword('correct horse battery');
    const { key, salt, n } = parse(stored);
    const flippedKey = Buffer.from(key);
    flippedKey[0] ^= 0x01;
    const flippedSalt = Buffer.from(salt);
    flippedSalt[5] ^= 0x80;
    expect(await verifyPassword('correct horse battery', withPart(stored, 5, flippedKey.toString('base64')))).toBe(false);
    expect(await verifyPassword('correct horse battery', withPart(stored, 4, flippedSalt.toString('base64')))).toBe(false);
    expect(await verifyPassword('correct horse battery', withPart(stored, 1, String(n / 2)))).toBe(false);
    // A shortened key is in tests/integration/PENDING-password-key-length.test.ts.txt (it verifies today).
  });

  it('refuses stored values that are not scrypt hashes at all', async () => {
    expect(await verifyPassword('x', '')).toBe(false);
    expect(await verifyPassword('x', 'x')).toBe(false);
    expect(await verifyPassword('x', '$2b$12$abcdefghijklmnopqrstuv')).toBe(false);
    expect(await verifyPassword('correct horse battery', withPart(await hashPassword('correct horse battery'), 0, 'bcrypt'))).toBe(false);
  });

  it('normalises to NFKC, so a ligature and its letters are the same password', async () => {
    // NIST SP 800-63B §5.1.1.2 recommends Unicode normalisation (NFKC or NFKD) before hashing (from memory).
    const stored = await hashPassword('o\uFB03ce-key-42'); // "ﬃ" ligature
    expect(await verifyPassword('office-key-42', stored)).toBe(true);
  });

  it('gives a scrypt decoy hash, made once, that no ordinary password matches', async () => {
    const decoy = await decoyHash();
    expect(parse(decoy).kind).toBe('scrypt');
    expect(await decoyHash()).toBe(decoy);
    expect(await verifyPassword('demo-only-pass', decoy)).toBe(false);
  });
});
