import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { everyTwoPieceSplit, runThrough, splitAt } from '../testing/streams';
import { LineSplitter, lineText, type Line, type LineSplitterOptions } from './lines';

// Splitting follows @serialport/parser-readline (delimiter kept, tail flushed at end); decoding, the
// CR strip and the length bound are ours.

const lines = (chunks: ReadonlyArray<Buffer | string>, options?: LineSplitterOptions) =>
  runThrough<Line>(chunks, [new LineSplitter(options)]);

describe('LineSplitter', () => {
  // ReadlineParser semantics (serialport docs): split after each delimiter, which is kept with includeDelimiter.
  it('keeps each line exactly as sent and strips CRLF only from the text', async () => {
    const out = await lines(['TEST      cCRP\r\nRESULT    37.4 mg/L\r\n\r\nlast\n']);
    expect(out).toEqual([
      { raw: 'TEST      cCRP\r\n', text: 'TEST      cCRP', overlong: false },
      { raw: 'RESULT    37.4 mg/L\r\n', text: 'RESULT    37.4 mg/L', overlong: false },
      { raw: '\r\n', text: '', overlong: false },
      { raw: 'last\n', text: 'last', overlong: false },
    ]);
  });

  // DelimiterParser flushes what it holds when the stream ends.
  it('emits an unterminated last line at end of stream', async () => {
    expect(await lines(['one\r\ntwo'])).toEqual([
      { raw: 'one\r\n', text: 'one', overlong: false },
      { raw: 'two', text: 'two', overlong: false },
    ]);
  });

  it('joins a CRLF that is split between chunks', async () => {
    expect(await lines(['SN        SIM-0001\r', '\nEND\r', '\n'])).toEqual(await lines(['SN        SIM-0001\r\nEND\r\n']));
    expect((await lines(['A\r', '\n']))[0]).toEqual({ raw: 'A\r\n', text: 'A', overlong: false });
  });

  // Common practice, no source: a framer must not depend on how the OS chunked the bytes.
  it('gives the same lines for the input split at every position', async () => {
    const input = Buffer.from('---- RESULT ----\r\nTEST      cCRP\r\n\r\nRESULT    <5,0 mg/L\r\nµ ümlaut\r\ntail');
    const whole = await lines([input]);
    for (const chunks of everyTwoPieceSplit(input)) expect(await lines(chunks)).toEqual(whole);
  });

  it('gives the same lines however the input is chunked, overlong lines included', async () => {
    const text = fc.array(fc.constantFrom('a', 'é', '€', '𝄞', ' ', '\r', '\n', '\r\n', '\f', 'RESULT    12.5 mg/L'), { maxLength: 80 });
    await fc.assert(
      fc.asyncProperty(text, fc.array(fc.nat({ max: 400 }), { maxLength: 12 }), async (parts, cuts) => {
        const input = Buffer.from(parts.join(''));
        const options = { maxLineBytes: 16 };
        expect(await lines(splitAt(input, cuts), options)).toEqual(await lines([input], options));
      }),
      { numRuns: 200 },
    );
  });

  it('cuts an overlong line into marked pieces that together are the whole line', async () => {
    const long = 'x'.repeat(10_000);
    const out = await lines([`${long}\r\nnext\r\n`]);
    expect(out.map((line) => [line.raw.length, line.overlong])).toEqual([
      [4096, true],
      [4096, true],
      [1810, false],
      [6, false],
    ]);
    expect(out.map((line) => line.raw).join('')).toBe(`${long}\r\nnext\r\n`);
  });

  it('bounds what it holds while waiting for a line end', async () => {
    const splitter = new LineSplitter({ maxLineBytes: 64 });
    const seen: Line[] = [];
    splitter.on('data', (line: Line) => seen.push(line));
    let mostHeld = 0;
    for (let i = 0; i < 100; i++) {
      splitter.write(Buffer.from('y'.repeat(7)));
      mostHeld = Math.max(mostHeld, splitter.buffer.length);
    }
    expect(mostHeld).toBe(64);
    splitter.end();
    await new Promise((resolve) => splitter.on('end', resolve));
    expect(seen.map((line) => line.raw).join('')).toBe('y'.repeat(700));
    expect(seen.every((line) => line.raw.length <= 64)).toBe(true);
  });

  // UTF-8 (RFC 3629): continuation bytes are 10xxxxxx; a cut must not fall between them.
  it('does not split a UTF-8 character when cutting', async () => {
    const out = await lines([`${'ab€'.repeat(20)}\n`], { maxLineBytes: 16 });
    expect(out.every((line) => !line.raw.includes('\uFFFD'))).toBe(true);
    expect(out.map((line) => line.raw).join('')).toBe(`${'ab€'.repeat(20)}\n`);
  });

  // Printers end lines with CR, LF or CRLF and eject pages with a form feed (ASCII FF, 0x0C).
  it('ends lines at CR, LF, CRLF and form feed, keeping each ending in raw', async () => {
    const out = await lines(['one\rtwo\nthree\r\n\ffour\r', '\nfive\r']);
    expect(out).toEqual([
      { raw: 'one\r', text: 'one', overlong: false },
      { raw: 'two\n', text: 'two', overlong: false },
      { raw: 'three\r\n', text: 'three', overlong: false },
      { raw: '\f', text: '', overlong: false },
      { raw: 'four\r\n', text: 'four', overlong: false },
      { raw: 'five\r', text: 'five', overlong: false },
    ]);
  });

  it('releases a line held on a trailing CR once the link goes quiet', async () => {
    const splitter = new LineSplitter({ releaseCrAfterMs: 5 });
    const seen = new Promise<Line>((resolve) => splitter.once('data', resolve));
    splitter.write(Buffer.from('END\r'));
    expect(await seen).toEqual({ raw: 'END\r', text: 'END', overlong: false });
    splitter.destroy();
  });

  it('on a link that has shown CR-only line ends, a trailing CR ends the line at once, without the quiet time', async () => {
    // Some printers end lines with CR alone (common practice, no source). An hour-long quiet time makes
    // any wait visible: the line must come from the write itself.
    const splitter = new LineSplitter({ releaseCrAfterMs: 3_600_000 });
    const seen: Line[] = [];
    splitter.on('data', (line: Line) => seen.push(line));
    splitter.write(Buffer.from('SAMPLE 4\rK 5.9\r'));
    await new Promise((resolve) => setImmediate(resolve));
    expect(seen.map((l) => l.raw)).toEqual(['SAMPLE 4\r', 'K 5.9\r']);
    splitter.write(Buffer.from('== END ==\r'));
    await new Promise((resolve) => setImmediate(resolve));
    expect(seen.map((l) => l.raw)).toEqual(['SAMPLE 4\r', 'K 5.9\r', '== END ==\r']);
    splitter.destroy();
  });

  it('a CRLF link keeps holding a trailing CR for its LF, so CRLF split across reads is one line end', async () => {
    const splitter = new LineSplitter({ releaseCrAfterMs: 3_600_000 });
    const seen: Line[] = [];
    splitter.on('data', (line: Line) => seen.push(line));
    splitter.write(Buffer.from('ONE\r\nTWO\r'));
    splitter.write(Buffer.from('\nTHREE\r\n'));
    await new Promise((resolve) => setImmediate(resolve));
    expect(seen.map((l) => l.raw)).toEqual(['ONE\r\n', 'TWO\r\n', 'THREE\r\n']);
    splitter.destroy();
  });

  it('decodes latin1 when asked', async () => {
    const out = await lines([Buffer.from([0x35, 0x20, 0xb5, 0x6d, 0x6f, 0x6c, 0x0d, 0x0a])], { encoding: 'latin1' });
    expect(out).toEqual([{ raw: '5 µmol\r\n', text: '5 µmol', overlong: false }]);
  });
});

describe('lineText', () => {
  it('drops LF, CRLF or a lone trailing CR, and nothing else', () => {
    expect(lineText('a\r\n')).toBe('a');
    expect(lineText('a\n')).toBe('a');
    expect(lineText('a\r')).toBe('a');
    expect(lineText('a\f')).toBe('a');
    expect(lineText('a\r\r')).toBe('a\r');
    expect(lineText(' a \t')).toBe(' a \t');
  });
});
