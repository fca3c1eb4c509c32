// Parser throughput per dialect against plain line splitting of the same bytes, through the bridge's
// own stream stages (file replay: 16 KiB chunks, no idle timers). The baseline is the least any
// line-based reader must do: find the line ends and make strings.
import { Readable, Transform, Writable, type Duplex, type TransformCallback } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { getDialect } from '@/bridge/dialects';
import { profileDialect } from '@/bridge/dialects/profile';
import { mllpWrap } from '@/bridge/framing/mllp';
import { createChemistryAnalyzer } from '@/bridge/simulator/astm-chemistry';
import { createHematologyAnalyzer } from '@/bridge/simulator/hl7-hematology';
import { createReader } from '@/bridge/simulator/printouts';
import { testSession } from '@/bridge/testing/astm';
import { createParsingStages } from '@/bridge/parse-stage';
import { profileDefinitionSchema } from '@/lib/validation/profile';
import { ms, now, type Report } from './report';

const CHUNK = 16 * 1024;
const clock = () => new Date(Date.UTC(2026, 11, 1, 9, 0, 0));

/** An invented electrolyte printer's profile (CR-only lines), as an administrator would write it. */
export const ELECTROLYTE_PROFILE = await profileDefinitionSchema.parseAsync({
  analyzer: 'Invented electrolyte printer',
  record: { start: '^== ELECTROLYTES ==$', end: '^== END ==$' },
  fields: [
    { label: 'Sample', pattern: '^SAMPLE (?<sampleId>\\S+)' },
    { label: 'Result', pattern: '^(?<analyte>NA|K|CL)\\s+(?<value>[\\d.]+)\\s+(?<unit>mmol/L)(?:\\s+(?<flag>[HL]))?$', repeats: true },
  ],
});

function corpus(targetBytes: number, next: () => Buffer): Buffer {
  const parts: Buffer[] = [];
  let size = 0;
  while (size < targetBytes) {
    const part = next();
    parts.push(part);
    size += part.length;
  }
  return Buffer.concat(parts);
}

export function corpora(mbPerDialect: number) {
  const target = mbPerDialect * 2 ** 20;
  const reader = createReader({ seed: 7, clock });
  const chemistry = createChemistryAnalyzer({ seed: 11, clock });
  const hematology = createHematologyAnalyzer({ seed: 13, clock });
  let sample = 1;
  return [
    { dialect: getDialect('plain-printout'), bytes: corpus(target, () => Buffer.from(reader.next().text, 'latin1')) },
    { dialect: getDialect('astm-e1394'), bytes: corpus(target, () => testSession(chemistry.next().records)) },
    { dialect: getDialect('hl7v2'), bytes: corpus(target, () => mllpWrap(hematology.next().text)) },
    {
      dialect: profileDialect(ELECTROLYTE_PROFILE, { key: 'bench', version: 1 }),
      bytes: corpus(target, () => Buffer.from(['== ELECTROLYTES ==', `SAMPLE E-${sample++}`, 'NA   148 mmol/L', 'K    5.9 mmol/L  H', 'CL   110 mmol/L', '== END ==', ''].join('\r'), 'latin1')),
    },
  ];
}

/** The baseline: split on line ends (LF, or CR for CR-only printers) into strings, nothing more. */
class PlainLines extends Transform {
  private rest = '';
  constructor(private readonly eol: string) {
    super({ readableObjectMode: true });
  }
  override _transform(chunk: Buffer, _e: BufferEncoding, done: TransformCallback) {
    const text = this.rest + chunk.toString('latin1');
    let start = 0;
    for (let i = text.indexOf(this.eol); i !== -1; i = text.indexOf(this.eol, start)) {
      this.push(text.slice(start, i + 1));
      start = i + 1;
    }
    this.rest = text.slice(start);
    done();
  }
  override _flush(done: TransformCallback) {
    if (this.rest) this.push(this.rest);
    done();
  }
}

async function throughput(bytes: Buffer, stages: Duplex[]): Promise<{ mbps: number; outputs: number }> {
  let outputs = 0;
  const chunks = function* () {
    for (let i = 0; i < bytes.length; i += CHUNK) yield bytes.subarray(i, i + CHUNK);
  };
  const sink = new Writable({ objectMode: true, write: (_o, _e, done) => (outputs++, done()) });
  const start = now();
  await pipeline([Readable.from(chunks(), { objectMode: false }), ...stages, sink]);
  return { mbps: bytes.length / 2 ** 20 / (ms(start) / 1000), outputs };
}

export async function benchParsers(report: Report, mbPerDialect: number) {
  for (const { dialect, bytes } of corpora(mbPerDialect)) {
    const eol = dialect.name === 'plain-printout' ? '\n' : '\r';
    // Best of two for the (cheap) baseline, so a neighbour's burst on the shared cores counts less.
    const base = Math.max(...[await throughput(bytes, [new PlainLines(eol)]), await throughput(bytes, [new PlainLines(eol)])].map((r) => r.mbps));
    const run = await throughput(bytes, createParsingStages(dialect, { idle: false }));
    report.add({
      section: 'parser',
      name: `${dialect.name}: ${(bytes.length / 2 ** 20).toFixed(0)} MB → ${run.outputs.toLocaleString('en-US')} outputs`,
      value: run.mbps,
      unit: 'MB/s',
      baseline: 'plain line splitting',
      baselineValue: base,
    });
  }
}
