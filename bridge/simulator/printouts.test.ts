import { connect } from 'node:net';
import { PassThrough } from 'node:stream';
import { describe, expect, it } from 'vitest';
import type { ParserOutput } from '../../lib/validation/readings';
import { plainPrintout } from '../dialects/plain-printout';
import { createParsingStages } from '../parse-stage';
import { runThrough } from '../testing/streams';
import { createReader } from './printouts';
import { runSimulator } from './simulate';

// What the simulator should print is our own brief: canine CRP mostly 0–50 mg/L, some "<5.0",
// occasionally ">200", a sample id on about half the slips, now and then a printer notice or a failed run.

const clock = () => new Date(2026, 11, 1, 14, 3, 22);
const parse = (text: string) => runThrough<ParserOutput>([text], createParsingStages(plainPrintout, { idle: false }));

describe('simulated reader', () => {
  it('prints the same slips for the same seed', () => {
    const a = createReader({ seed: 42, clock });
    const b = createReader({ seed: 42, clock });
    const c = createReader({ seed: 43, clock });
    const run = (reader: typeof a) => Array.from({ length: 50 }, () => reader.next().text);
    const first = run(a);
    expect(run(b)).toEqual(first);
    expect(run(c)).not.toEqual(first);
  });

  it('prints a plausible mix of slips', () => {
    const reader = createReader({ seed: 7, clock });
    const slips = Array.from({ length: 2000 }, () => reader.next());
    const share = (test: (s: (typeof slips)[number]) => boolean) => slips.filter(test).length / slips.length;
    const results = slips.filter((s) => s.kind === 'result');
    const numeric = results.map((s) => Number.parseFloat(s.result.replace(/^[<>]/, '')));
    expect(share((s) => s.kind === 'failed run')).toBeGreaterThan(0.02);
    expect(share((s) => s.kind === 'failed run')).toBeLessThan(0.12);
    expect(share((s) => s.result.startsWith('<5.0'))).toBeGreaterThan(0.1);
    expect(share((s) => s.result.startsWith('>200'))).toBeGreaterThan(0.005);
    expect(share((s) => s.result.startsWith('>200'))).toBeLessThan(0.08);
    expect(numeric.filter((v) => v <= 50).length / numeric.length).toBeGreaterThan(0.7);
    expect(share((s) => s.sampleId !== null)).toBeGreaterThan(0.4);
    expect(share((s) => s.sampleId !== null)).toBeLessThan(0.6);
    expect(share((s) => s.text.includes('SAMPLE    ---'))).toBeGreaterThan(0.1);
    expect(share((s) => s.notice !== null)).toBeGreaterThan(0.03);
    expect(new Set(slips.filter((s) => s.sampleId).map((s) => s.sampleId)).size).toBe(slips.filter((s) => s.sampleId).length);
  });

  it('prints slips the plain-printout dialect reads back as printed', async () => {
    const reader = createReader({ seed: 11, clock, serialNumber: 'SIM-0042' });
    for (let i = 0; i < 300; i++) {
      const slip = reader.next();
      const out = await parse(slip.text);
      const expected: unknown[] = [];
      if (slip.notice) expected.push({ kind: 'unparsed', raw: `${slip.notice}\r\n`, reason: 'text outside any record' });
      if (slip.kind === 'failed run') {
        expected.push(expect.objectContaining({ kind: 'unparsed', reason: `RESULT "${slip.result}" is not a number` }));
      } else {
        const [, comparator, value] = /^([<>]?)([\d.]+) mg\/L$/.exec(slip.result) ?? [];
        expected.push(
          expect.objectContaining({
            kind: 'reading',
            analyte: 'cCRP',
            value: Number(value),
            comparator: comparator || null,
            unit: 'mg/L',
            sampleId: slip.sampleId,
            instrumentSerial: 'SIM-0042',
          }),
        );
      }
      expect(out).toEqual(expected);
      const reading = out.find((o) => o.kind === 'reading');
      if (reading?.kind === 'reading') expect(new Date(reading.measuredAt ?? '').getTime()).toBe(clock().getTime());
    }
  });
});

const withoutClock = (text: string) => text.replace(/^(DATE|TIME) .*\r\n/gm, '');

function expectedSlips(seed: number, count: number): string {
  const reader = createReader({ seed });
  return withoutClock(Array.from({ length: count }, () => reader.next().text).join(''));
}

describe('runSimulator', () => {
  it('prints the asked number of slips to stdout', async () => {
    const out = new PassThrough();
    let text = '';
    out.on('data', (chunk: Buffer) => (text += chunk.toString()));
    await runSimulator({ target: { kind: 'stdout', out }, seed: 3, count: 4, everyMs: 0 });
    expect(text.match(/---- RESULT ----/g)).toHaveLength(4);
    expect(withoutClock(text)).toBe(expectedSlips(3, 4));
  });

  it('sends slips to a connected client like a serial-to-network adapter', async () => {
    let ready: (port: number) => void = () => {};
    const listening = new Promise<number>((resolve) => (ready = resolve));
    const done = runSimulator({
      target: { kind: 'listen', port: 0, waitForClient: true },
      seed: 5,
      count: 3,
      everyMs: 0,
      onReady: ({ port }) => ready(port ?? 0),
    });
    const socket = connect({ host: '127.0.0.1', port: await listening });
    let text = '';
    socket.on('data', (chunk: Buffer) => (text += chunk.toString()));
    await Promise.all([done, new Promise((resolve) => socket.on('close', resolve))]);
    expect(withoutClock(text)).toBe(expectedSlips(5, 3));
  });
});
