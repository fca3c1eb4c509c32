// Regression (lib/auth/password.ts, verifyPassword): the derived-key length is taken from the stored hash
// (`expected.length`), and N/r/p are taken from it unchecked.
//  - A stored key that decodes to 0 bytes (e.g. "…$!!!!" or "…$=") makes scrypt derive 0 bytes and
//    timingSafeEqual(<empty>, <empty>) is true: ANY password verifies. (Fail-open.)
//  - scrypt output is prefix-consistent (RFC 7914 §6: it ends in PBKDF2-HMAC-SHA256, whose blocks are
//    independent of dkLen), so a key truncated to 16 or 1 byte(s) still verifies; at 1 byte a random guess
//    succeeds 1 time in 256.
//  - A non-numeric or non-power-of-two N throws (RangeError) instead of answering false, so sign-in answers 500.
// Expected: only the parameters hashPassword writes (or a known list) with a 32-byte key are accepted;
// anything else verifies as false.
import { describe, expect, it } from 'vitest';
import { hashPassword, verifyPassword } from '@/lib/auth/password';

const withPart = (stored: string, index: number, value: string) => {
  const parts = stored.split('$');
  parts[index] = value;
  return parts.join('$');
};

describe('verifyPassword refuses malformed stored hashes', () => {
  it('a key part that decodes to nothing does not accept every password', async () => {
    const stored = await hashPassword('correct horse battery');
    expect(await verifyPassword('any guess at all', withPart(stored, 5, '!!!!'))).toBe(false);
    expect(await verifyPassword('any guess at all', withPart(stored, 5, '='))).toBe(false);
  });

  it('a truncated key is refused, even with the right password', async () => {
    const stored = await hashPassword('correct horse battery');
    const key = Buffer.from(stored.split('$')[5], 'base64');
    expect(await verifyPassword('correct horse battery', withPart(stored, 5, key.subarray(0, 16).toString('base64')))).toBe(false);
    expect(await verifyPassword('correct horse battery', withPart(stored, 5, key.subarray(0, 1).toString('base64')))).toBe(false);
  });

  it('nonsense cost parameters answer false instead of throwing', async () => {
    const stored = await hashPassword('correct horse battery');
    await expect(verifyPassword('correct horse battery', withPart(stored, 1, 'abc'))).resolves.toBe(false);
    // RFC 7914 §2: N must be a power of 2 greater than 1.
    await expect(verifyPassword('correct horse battery', withPart(stored, 1, '3'))).resolves.toBe(false);
  });
});
