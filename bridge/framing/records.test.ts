import { afterEach, describe, expect, it, vi } from 'vitest';
import { runThrough } from '../testing/streams';
import { LineSplitter, type Line } from './lines';
import { OUTSIDE_RECORD, RecordFramer, type FramerOutput, type RecordFraming } from './records';

// Framing rules are ours (common practice, no source): records run from a start line through an
// end line; anything else that is not blank is kept as an unparsed fragment, never dropped.

const framing: RecordFraming = { start: /^BEGIN$/, end: /^END$/, maxLines: 5 };

const frame = (text: string, options: Partial<RecordFraming> = {}) =>
  runThrough<FramerOutput>([text], [new LineSplitter(), new RecordFramer({ ...framing, ...options })]);

const summary = (outputs: FramerOutput[]) =>
  outputs.map((output) => (output.kind === 'record' ? { record: output.raw } : { unparsed: output.raw, reason: output.reason }));

describe('RecordFramer', () => {
  afterEach(() => {
    vi.useRealTimers();
  });

  it('emits a record with its lines and exact raw text', async () => {
    const [out] = await frame('BEGIN\r\nA  1\r\nEND\r\n');
    expect(out).toEqual({
      kind: 'record',
      raw: 'BEGIN\r\nA  1\r\nEND\r\n',
      lines: [
        { raw: 'BEGIN\r\n', text: 'BEGIN', overlong: false },
        { raw: 'A  1\r\n', text: 'A  1', overlong: false },
        { raw: 'END\r\n', text: 'END', overlong: false },
      ],
    });
  });

  it('does not report blank lines between records', async () => {
    expect(summary(await frame('\r\n  \r\nBEGIN\nEND\n\r\n\t\r\nBEGIN\nEND\n\n'))).toEqual([
      { record: 'BEGIN\nEND\n' },
      { record: 'BEGIN\nEND\n' },
    ]);
  });

  it('groups stray lines into one fragment, flushed when the next record starts', async () => {
    expect(summary(await frame('BEGIN\nEND\n\nPAPER FEED\n\nLID OPEN\n\n\nBEGIN\nEND\n'))).toEqual([
      { record: 'BEGIN\nEND\n' },
      // Blank lines between stray lines stay in the raw text; those around it are spacing.
      { unparsed: 'PAPER FEED\n\nLID OPEN\n', reason: OUTSIDE_RECORD },
      { record: 'BEGIN\nEND\n' },
    ]);
  });

  it('flushes stray lines at end of stream', async () => {
    expect(summary(await frame('noise\n'))).toEqual([{ unparsed: 'noise\n', reason: OUTSIDE_RECORD }]);
  });

  it('turns a record cut short by a new start into a fragment and frames the new one', async () => {
    expect(summary(await frame('BEGIN\nA  1\nBEGIN\nB  2\nEND\n'))).toEqual([
      { unparsed: 'BEGIN\nA  1\n', reason: 'record cut short: a new record started before the end line' },
      { record: 'BEGIN\nB  2\nEND\n' },
    ]);
  });

  it('turns a record with too many lines into a fragment and keeps the lines after it', async () => {
    expect(summary(await frame('BEGIN\n1\n2\n3\n4\n5\n6\nEND\n'))).toEqual([
      { unparsed: 'BEGIN\n1\n2\n3\n4\n', reason: 'record cut short: more than 5 lines without an end line' },
      { unparsed: '5\n6\nEND\n', reason: OUTSIDE_RECORD },
    ]);
  });

  it('allows a record of exactly maxLines lines', async () => {
    expect(summary(await frame('BEGIN\n1\n2\n3\nEND\n'))).toEqual([{ record: 'BEGIN\n1\n2\n3\nEND\n' }]);
  });

  it('turns a record still open at end of stream into a fragment', async () => {
    expect(summary(await frame('BEGIN\nA  1\n'))).toEqual([
      { unparsed: 'BEGIN\nA  1\n', reason: 'record cut short: input ended before the end line' },
    ]);
  });

  it('splits a long run of stray lines into fragments of at most maxLines lines', async () => {
    const out = await frame(Array.from({ length: 12 }, (_, i) => `noise ${i}\n`).join(''));
    expect(out.map((o) => o.raw.split('\n').length - 1)).toEqual([5, 5, 2]);
    expect(out.map((o) => o.raw).join('')).toBe(Array.from({ length: 12 }, (_, i) => `noise ${i}\n`).join(''));
  });

  it('ends stray text at a long run of blank lines instead of holding them', async () => {
    expect(summary(await frame(`noise\n${'\n'.repeat(20)}more noise\n`))).toEqual([
      { unparsed: 'noise\n', reason: OUTSIDE_RECORD },
      { unparsed: 'more noise\n', reason: OUTSIDE_RECORD },
    ]);
  });

  it('keeps every output within maxChars', async () => {
    const out = await frame(`BEGIN\n${'x'.repeat(30)}\n${'y'.repeat(30)}\nEND\n`, { maxChars: 50 });
    expect(summary(out)).toEqual([
      { unparsed: `BEGIN\n${'x'.repeat(30)}\n`, reason: 'record cut short: more than 50 characters without an end line' },
      { unparsed: `${'y'.repeat(30)}\nEND\n`, reason: OUTSIDE_RECORD },
    ]);
  });

  it('frames a line that is both start and end as a one-line record', async () => {
    expect(summary(await frame('ONE\n', { start: /^ONE$/, end: /^ONE$/ }))).toEqual([{ record: 'ONE\n' }]);
  });

  // RegExp.prototype.test with /g advances lastIndex (ECMAScript spec); patterns from profiles may carry it.
  it('is not confused by global-flag patterns', async () => {
    const out = await frame('BEGIN\nEND\nBEGIN\nEND\nBEGIN\nEND\n', { start: /BEGIN/g, end: /END/g });
    expect(summary(out)).toEqual([{ record: 'BEGIN\nEND\n' }, { record: 'BEGIN\nEND\n' }, { record: 'BEGIN\nEND\n' }]);
  });

  it('gives up an unfinished record and flushes stray text after the idle gap', async () => {
    vi.useFakeTimers();
    const framer = new RecordFramer({ ...framing, idleMs: 10_000 });
    const seen: FramerOutput[] = [];
    framer.on('data', (output: FramerOutput) => seen.push(output));
    const line = (text: string): Line => ({ raw: `${text}\n`, text, overlong: false });

    framer.write(line('noise'));
    framer.write(line('BEGIN'));
    framer.write(line('A  1'));
    await vi.advanceTimersByTimeAsync(9_999);
    expect(summary(seen)).toEqual([{ unparsed: 'noise\n', reason: OUTSIDE_RECORD }]);
    await vi.advanceTimersByTimeAsync(1);
    expect(summary(seen)).toEqual([
      { unparsed: 'noise\n', reason: OUTSIDE_RECORD },
      { unparsed: 'BEGIN\nA  1\n', reason: 'record cut short: no end line within 10 s' },
    ]);

    framer.write(line('later noise'));
    await vi.advanceTimersByTimeAsync(10_000);
    expect(seen.at(-1)).toEqual({ kind: 'unparsed', raw: 'later noise\n', reason: OUTSIDE_RECORD });
    framer.destroy();
  });

  // Profiles (lib/validation/profile.ts) may mark records by a start line only, an end line only,
  // a form feed or a quiet gap; the rules below are ours.
  it('ends a start-only record at the next start, and at end of input', async () => {
    expect(summary(await frame('BEGIN\nA\nBEGIN\nB\n', { end: undefined }))).toEqual([{ record: 'BEGIN\nA\n' }, { record: 'BEGIN\nB\n' }]);
  });

  it('starts an end-only record at the first non-blank line', async () => {
    expect(summary(await frame('\nA\nEND\n\nB\nEND\nC\n', { start: undefined }))).toEqual([
      { record: 'A\nEND\n' },
      { record: 'B\nEND\n' },
      { unparsed: 'C\n', reason: 'record cut short: input ended before the end line' },
    ]);
  });

  it('ends a record at a form feed, which stays in its raw text', async () => {
    expect(summary(await frame('A\nB\r\n\fC\n\f', { start: undefined, end: undefined, formFeed: true }))).toEqual([
      { record: 'A\nB\r\n\f' },
      { record: 'C\n\f' },
    ]);
  });

  it('ends a gap-framed record normally when the line goes quiet', async () => {
    vi.useFakeTimers();
    const framer = new RecordFramer({ maxLines: 10, gapMs: 500 });
    const seen: FramerOutput[] = [];
    framer.on('data', (output: FramerOutput) => seen.push(output));
    framer.write({ raw: 'A 1\n', text: 'A 1', overlong: false });
    framer.write({ raw: 'B 2\n', text: 'B 2', overlong: false });
    await vi.advanceTimersByTimeAsync(499);
    expect(seen).toEqual([]);
    await vi.advanceTimersByTimeAsync(1);
    expect(summary(seen)).toEqual([{ record: 'A 1\nB 2\n' }]);
    framer.destroy();
  });

  it('rejects a nonsensical configuration', () => {
    expect(() => new RecordFramer({ maxLines: 3 })).toThrow(/say where records are/);
    expect(() => new RecordFramer({ ...framing, maxLines: 0 })).toThrow(RangeError);
    expect(() => new RecordFramer({ ...framing, idleMs: 0 })).toThrow(RangeError);
  });
});
