import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { bearerToken, hashBridgeToken, newBridgeToken } from '@/lib/auth/tokens';

const withAuthorization = (value?: string) =>
  new Request('http://benchwire.test/api/bridge/readings', { headers: value === undefined ? {} : { authorization: value } });

describe('bridge token hashing', () => {
  it('is SHA-256 in lower-case hex: FIPS 180-2 Appendix B.1 vector for "abc"', () => {
    // FIPS 180-2, Appendix B.1 (SHA-256 of "abc").
    expect(hashBridgeToken('abc')).toBe('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad');
  });

  it('hashes the empty string to the well-known SHA-256 value (from memory)', () => {
    expect(hashBridgeToken('')).toBe('e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855');
  });

  it('hashes the UTF-8 bytes, matching node:crypto', () => {
    const token = 'bwb_Ünïcode-tøken';
    expect(hashBridgeToken(token)).toBe(createHash('sha256').update(Buffer.from(token, 'utf8')).digest('hex'));
  });
});

describe('newBridgeToken', () => {
  it('makes a bwb_ token of 32 random bytes in base64url, its hash and a short hint', () => {
    const { token, hash, hint } = newBridgeToken();
    // RFC 4648 §5: base64url alphabet; 32 bytes → 43 characters without padding.
    expect(token).toMatch(/^bwb_[A-Za-z0-9_-]{43}$/);
    expect(Buffer.from(token.slice(4), 'base64url')).toHaveLength(32);
    expect(hash).toBe(createHash('sha256').update(token).digest('hex'));
    expect(hint).toBe(token.slice(0, 10));
  });

  it('never repeats a token', () => {
    const tokens = new Set(Array.from({ length: 50 }, () => newBridgeToken().token));
    expect(tokens.size).toBe(50);
  });

  it('produces tokens that fit the RFC 6750 §2.1 b64token syntax', () => {
    expect(newBridgeToken().token).toMatch(/^[A-Za-z0-9\-._~+/]+=*$/);
  });
});

describe('bearerToken (RFC 6750 §2.1)', () => {
  it('reads "Bearer <token>"', () => {
    expect(bearerToken(withAuthorization('Bearer bwb_abc123'))).toBe('bwb_abc123');
  });

  it('treats the scheme name case-insensitively (RFC 9110 §11.1)', () => {
    expect(bearerToken(withAuthorization('bearer bwb_abc123'))).toBe('bwb_abc123');
    expect(bearerToken(withAuthorization('BEARER bwb_abc123'))).toBe('bwb_abc123');
  });

  it('keeps "=" padding, which b64token allows at the end', () => {
    expect(bearerToken(withAuthorization('Bearer mF_9.B5f-4.1JqM=='))).toBe('mF_9.B5f-4.1JqM==');
  });

  it.each<[string | undefined, string]>([
    [undefined, 'no header'],
    ['', 'empty header'],
    ['Bearer', 'scheme without a token'],
    ['Bearer ', 'scheme and a space'],
    ['Basic YWRtaW46cGFzcw==', 'another scheme (RFC 7617)'],
    ['Bearer two tokens', 'more than one token'],
    ['Bearerbwb_abc', 'no space after the scheme'],
    ['Token bwb_abc', 'unknown scheme'],
  ])('gives null for %j (%s)', (value) => {
    expect(bearerToken(withAuthorization(value))).toBeNull();
  });
});
