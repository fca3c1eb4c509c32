import { seededRandom } from './random';

// An invented single-test reader printing canine CRP slips in the plain-printout format.
// Values lean the way a clinic's caseload does: most dogs healthy or mildly inflamed, a few very high.

export interface Printout {
  /** The bytes as the reader sends them (CRLF line endings). */
  text: string;
  kind: 'result' | 'failed run';
  /** The printed RESULT, e.g. "37.4 mg/L", "<5.0 mg/L", "ERR 03". */
  result: string;
  sampleId: string | null;
  /** A printer notice sent before the slip, outside any record. */
  notice: string | null;
}

export interface ReaderOptions {
  seed: number;
  serialNumber?: string;
  clock?: () => Date;
}

const NOTICES = ['** PAPER FEED **', 'PAPER LOW', 'LID OPEN', 'SELF TEST OK'];
const ERRORS = ['ERR 01', 'ERR 03', 'ERR 07'];
const EOL = '\r\n';

export function createReader(options: ReaderOptions): { next(): Printout } {
  const random = seededRandom(options.seed);
  const clock = options.clock ?? (() => new Date());
  const serialNumber = options.serialNumber ?? 'SIM-0001';
  let run = 1 + Math.floor(random() * 400);
  let sampleNumber = 1000 + Math.floor(random() * 8000);
  const pick = <T>(items: readonly T[]): T => items[Math.floor(random() * items.length)];

  return {
    next(): Printout {
      const notice = random() < 0.08 ? pick(NOTICES) : null;
      const failed = random() < 0.06;
      const result = failed ? pick(ERRORS) : `${crpValue(random)} mg/L`;
      const sampleRoll = random();
      const sampleId = sampleRoll < 0.5 ? `A-${sampleNumber++}` : null;
      const now = clock();
      const lines = [
        '---- RESULT ----',
        'TEST      cCRP',
        `RESULT    ${result}`,
        // Half the slips carry no sample id: no SAMPLE line, or dashes.
        ...(sampleId ? [`SAMPLE    ${sampleId}`] : sampleRoll < 0.75 ? [] : ['SAMPLE    ---']),
        `RUN       ${String(run++ % 10000).padStart(4, '0')}`,
        `DATE      ${two(now.getDate())}.${two(now.getMonth() + 1)}.${now.getFullYear()}`,
        `TIME      ${two(now.getHours())}:${two(now.getMinutes())}:${two(now.getSeconds())}`,
        `SN        ${serialNumber}`,
        '---- END ----',
        '',
      ];
      const text = (notice ? notice + EOL + EOL : '') + lines.join(EOL) + EOL;
      return { text, kind: failed ? 'failed run' : 'result', result, sampleId, notice };
    },
  };
}

/** mg/L as printed: below the reporting limit as "<5.0", above the range as ">200". */
function crpValue(random: () => number): string {
  const roll = random();
  if (roll < 0.22) return '<5.0';
  if (roll < 0.82) return logUniform(random, 5, 50).toFixed(1);
  if (roll < 0.97) return logUniform(random, 50, 200).toFixed(1);
  return '>200';
}

function logUniform(random: () => number, low: number, high: number): number {
  return Math.exp(Math.log(low) + random() * (Math.log(high) - Math.log(low)));
}

function two(value: number): string {
  return String(value).padStart(2, '0');
}
