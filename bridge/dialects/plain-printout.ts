import { printedDecimals } from '../../lib/validation/numbers';
import { parsedReadingSchema, type ParserOutput } from '../../lib/validation/readings';
import type { RecordFrame } from '../framing/records';
import { fragment } from '../fragments';
import { localIsoDateTime } from '../local-time';
import type { Dialect } from './dialect';

// The text slip of a single-test reader:
//   ---- RESULT ----
//   TEST      cCRP
//   RESULT    37.4 mg/L
//   SAMPLE    A-1023
//   RUN       0042
//   DATE      01.12.2026
//   TIME      14:03:22
//   SN        SIM-0001
//   ---- END ----
// A field is a key, two or more spaces (or a tab), a value; fields come in any order.

const START = /^\s*-{2,}\s*RESULT\s*-{2,}\s*$/;
const END = /^\s*-{2,}\s*END\s*-{2,}\s*$/;
const FIELD = /^(\S+(?: \S+)*)(?:(?: {2,}|\t)\s*(.*))?$/;
const KNOWN_KEYS = new Set(['TEST', 'RESULT', 'SAMPLE', 'RUN', 'DATE', 'TIME', 'SN']);
const RESULT_VALUE = /^([<>])?\s*([+-]?\d+(?:[.,]\d+)?)(?:\s+(.+))?$/;
const DATE_VALUE = /^(\d{1,2})\.(\d{1,2})\.(\d{4})$/;
const TIME_VALUE = /^(\d{1,2}):(\d{2})(?::(\d{2}))?$/;
const NO_SAMPLE = /^-+$/;

class NotAReading extends Error {}

function parse(record: RecordFrame): ParserOutput {
  try {
    const reading = parsedReadingSchema.safeParse(readFields(record));
    if (reading.success) return reading.data;
    const issue = reading.error.issues[0];
    return fragment(record.raw, `reading does not fit the contract: ${issue?.path.join('.')} ${issue?.message}`);
  } catch (error) {
    if (error instanceof NotAReading) return fragment(record.raw, error.message);
    throw error;
  }
}

function readFields(record: RecordFrame) {
  if (record.lines.some((line) => line.overlong)) throw new NotAReading('a line of the slip is too long and was cut');
  const fields = new Map<string, string>();
  for (const line of record.lines) {
    const text = line.text.trim();
    if (text === '' || START.test(text) || END.test(text)) continue;
    const match = FIELD.exec(text);
    if (!match) continue;
    const key = match[1].toUpperCase();
    // Unknown lines stay in raw; they are not the reading's business.
    if (!KNOWN_KEYS.has(key)) continue;
    if (fields.has(key)) throw new NotAReading(`${key} is printed twice`);
    fields.set(key, (match[2] ?? '').trim());
  }

  const analyte = fields.get('TEST');
  if (analyte === undefined) throw new NotAReading('no TEST line');
  if (analyte === '') throw new NotAReading('TEST is empty');
  const result = fields.get('RESULT');
  if (result === undefined) throw new NotAReading('no RESULT line');
  const value = RESULT_VALUE.exec(result);
  if (!value) throw new NotAReading(`RESULT "${result}" is not a number`);

  const sample = fields.get('SAMPLE') ?? '';
  const serial = fields.get('SN') ?? '';
  return {
    kind: 'reading' as const,
    analyte,
    value: Number(value[2].replace(',', '.')),
    decimals: printedDecimals(value[2]),
    comparator: (value[1] ?? null) as '<' | '>' | null,
    unit: value[3]?.trim() || null,
    flags: [],
    sampleId: sample === '' || NO_SAMPLE.test(sample) ? null : sample,
    patientRef: null,
    measuredAt: measuredAt(fields.get('DATE'), fields.get('TIME')),
    instrumentSerial: serial === '' ? null : serial,
    raw: record.raw,
  };
}

/** DATE dd.mm.yyyy and TIME hh:mm[:ss], read as the lab PC's local time. */
function measuredAt(date: string | undefined, time: string | undefined): string | null {
  if (!date && !time) return null;
  if (!date) throw new NotAReading('TIME without DATE');
  if (!time) throw new NotAReading('DATE without TIME');
  const d = DATE_VALUE.exec(date);
  if (!d) throw new NotAReading(`DATE "${date}" is not dd.mm.yyyy`);
  const t = TIME_VALUE.exec(time);
  if (!t) throw new NotAReading(`TIME "${time}" is not hh:mm or hh:mm:ss`);
  const local = localIsoDateTime({
    year: Number(d[3]),
    month: Number(d[2]),
    day: Number(d[1]),
    hour: Number(t[1]),
    minute: Number(t[2]),
    second: Number(t[3] ?? 0),
  });
  if (local.ok) return local.iso;
  throw new NotAReading(local.problem === 'date' ? `DATE ${date} is not a real date` : `TIME ${time} is not a real time`);
}

export const plainPrintout: Dialect = {
  name: 'plain-printout',
  summary: 'text result slip of a single-test reader (---- RESULT ---- … ---- END ----)',
  framing: { start: START, end: END, maxLines: 40, idleMs: 15_000 },
  parse,
};
