import type { UnparsedFragment } from '../lib/validation/readings';

// Limits of the reading contract's unparsed fragment.
export const MAX_RAW_CHARS = 65536;
const MAX_REASON_CHARS = 200;

/** An unparsed fragment whose reason always fits the contract. */
export function fragment(raw: string, reason: string): UnparsedFragment {
  const trimmed = reason.trim() || 'not understood';
  const fitted = trimmed.length > MAX_REASON_CHARS ? `${trimmed.slice(0, MAX_REASON_CHARS - 1)}…` : trimmed;
  return { kind: 'unparsed', raw, reason: fitted };
}

/** Like fragment(), but text longer than the contract allows is kept as several fragments, not cut off. */
export function fragments(raw: string, reason: string): UnparsedFragment[] {
  if (raw.length <= MAX_RAW_CHARS) return [fragment(raw, reason)];
  const pieces: UnparsedFragment[] = [];
  let at = 0;
  while (at < raw.length) {
    let end = Math.min(at + MAX_RAW_CHARS, raw.length);
    // Never split a surrogate pair.
    if (end < raw.length && /[\uDC00-\uDFFF]/.test(raw[end])) end--;
    pieces.push(fragment(raw.slice(at, end), `${reason} (part ${pieces.length + 1})`));
    at = end;
  }
  return pieces;
}
