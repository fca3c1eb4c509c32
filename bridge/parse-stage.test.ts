import { describe, expect, it } from 'vitest';
import type { ParserOutput } from '../lib/validation/readings';
import type { Dialect } from './dialects';
import { plainPrintout } from './dialects/plain-printout';
import type { FramerOutput, RecordFrame } from './framing/records';
import { MAX_RAW_CHARS } from './fragments';
import { ParseStage, parseFrame } from './parse-stage';
import { runThrough } from './testing/streams';

// The rule is ours: nothing leaves the parse stage that does not fit the reading contract
// (lib/validation/readings.ts), and nothing is dropped; what cannot be a reading is a fragment.

const record = (raw: string): RecordFrame => ({ kind: 'record', raw, lines: [{ raw, text: raw.trimEnd(), overlong: false }] });
const dialect = (parse: Dialect['parse']): Dialect => ({ ...plainPrintout, name: 'test-dialect', parse });

describe('parseFrame', () => {
  it('passes fragments from the framer through unchanged', () => {
    const fragment = { kind: 'unparsed' as const, raw: 'LID OPEN\r\n', reason: 'text outside any record' };
    expect(parseFrame(plainPrintout, fragment)).toEqual([fragment]);
  });

  it('turns a parser that throws into a fragment that keeps the text', () => {
    const out = parseFrame(dialect(() => { throw new Error('boom'); }), record('A  1\n'));
    expect(out).toEqual([{ kind: 'unparsed', raw: 'A  1\n', reason: 'test-dialect parser failed: boom' }]);
  });

  it('turns output that breaks the contract into a fragment', () => {
    const bad = dialect((frame) => ({ kind: 'reading', analyte: '', value: 1, code: null, text: null, notes: [], comparator: null, unit: null, flags: [], sampleId: null, patientRef: null, measuredAt: null, instrumentSerial: null, referenceRange: null, resultStatus: null, raw: frame.raw }));
    expect(parseFrame(bad, record('X\n'))).toEqual([{ kind: 'unparsed', raw: 'X\n', reason: 'does not fit the contract: analyte analyte is required' }]);
  });

  it('keeps text longer than the contract allows as several fragments', () => {
    const raw = 'x'.repeat(MAX_RAW_CHARS * 2 + 10);
    const out = parseFrame(dialect(() => { throw new Error('no'); }), record(raw));
    expect(out.map((o) => o.raw.length)).toEqual([MAX_RAW_CHARS, MAX_RAW_CHARS, 10]);
    expect(out.map((o) => o.raw).join('')).toBe(raw);
    expect(out.map((o) => (o.kind === 'unparsed' ? o.reason : ''))).toEqual([
      'test-dialect parser failed: no (part 1)',
      'test-dialect parser failed: no (part 2)',
      'test-dialect parser failed: no (part 3)',
    ]);
  });
});

describe('ParseStage', () => {
  it('parses records in stream order', async () => {
    const frames: FramerOutput[] = [
      { kind: 'unparsed', raw: 'FEED\n', reason: 'text outside any record' },
      { kind: 'record', raw: '---- RESULT ----\nTEST  cCRP\nRESULT  3.0 mg/L\n---- END ----\n', lines: ['---- RESULT ----', 'TEST  cCRP', 'RESULT  3.0 mg/L', '---- END ----'].map((text) => ({ text, raw: `${text}\n`, overlong: false })) },
    ];
    const out = await runThrough<ParserOutput>(frames, [new ParseStage(plainPrintout)]);
    expect(out.map((o) => o.kind)).toEqual(['unparsed', 'reading']);
    expect(out[1]).toMatchObject({ analyte: 'cCRP', value: 3 });
  });
});
