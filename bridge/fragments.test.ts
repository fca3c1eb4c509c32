import { describe, expect, it } from 'vitest';
import { unparsedFragmentSchema } from '../lib/validation/readings';
import { MAX_RAW_CHARS, fragment, fragments } from './fragments';

// Limits from lib/validation/readings.ts: reason 1–200 characters after trimming, raw at most 65536.

describe('fragment', () => {
  it('always fits the contract, however long or empty the reason', () => {
    expect(unparsedFragmentSchema.safeParse(fragment('x', 'r'.repeat(500))).success).toBe(true);
    expect(fragment('x', 'r'.repeat(500)).reason).toHaveLength(200);
    expect(fragment('x', '   ')).toEqual({ kind: 'unparsed', raw: 'x', reason: 'not understood' });
  });
});

describe('fragments', () => {
  it('splits long text without losing or splitting a character', () => {
    const raw = `${'a'.repeat(MAX_RAW_CHARS - 1)}𝄞${'b'.repeat(10)}`;
    const out = fragments(raw, 'why');
    expect(out.map((o) => o.raw).join('')).toBe(raw);
    expect(out[0].raw.endsWith('a')).toBe(true);
    expect(out.every((o) => unparsedFragmentSchema.safeParse(o).success)).toBe(true);
  });
});
