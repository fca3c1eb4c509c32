import { Readable, Writable, type Duplex } from 'node:stream';
import { pipeline } from 'node:stream/promises';

// Test helpers shared by the stage tests.

/** Feed chunks (bytes, or objects for object-mode stages) through stages and collect what comes out. */
export async function runThrough<T>(chunks: readonly unknown[], stages: Duplex[]): Promise<T[]> {
  const out: T[] = [];
  const sink = new Writable({
    objectMode: true,
    write(item: T, _encoding, callback) {
      out.push(item);
      callback();
    },
  });
  const source = Readable.from(chunks.map((chunk) => (typeof chunk === 'string' ? Buffer.from(chunk) : chunk)));
  await pipeline([source, ...stages, sink]);
  return out;
}

/** The input cut in two at every byte position, 0 and length included. */
export function everyTwoPieceSplit(bytes: Buffer): Buffer[][] {
  const splits: Buffer[][] = [];
  for (let at = 0; at <= bytes.length; at++) splits.push([bytes.subarray(0, at), bytes.subarray(at)]);
  return splits;
}

/** The input cut at the given positions (sorted, deduplicated, clipped to the input). */
export function splitAt(bytes: Buffer, positions: readonly number[]): Buffer[] {
  const cuts = [...new Set(positions.map((p) => Math.max(0, Math.min(bytes.length, p))))].sort((a, b) => a - b);
  const pieces: Buffer[] = [];
  let from = 0;
  for (const cut of cuts) {
    pieces.push(bytes.subarray(from, cut));
    from = cut;
  }
  pieces.push(bytes.subarray(from));
  return pieces;
}

/** Run fn with the process time zone set to tz, then put it back. */
export async function withTimeZone<T>(tz: string, fn: () => T | Promise<T>): Promise<T> {
  const before = process.env.TZ;
  process.env.TZ = tz;
  try {
    return await fn();
  } finally {
    if (before === undefined) delete process.env.TZ;
    else process.env.TZ = before;
  }
}
