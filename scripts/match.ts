// `npm run --silent match -- replay FILE.json`: replays a recorded day through the matcher as Intake would
// have seen it and prints one JSON line per reading, then the summary scored against what was kept.
// Bad input: a message naming the field on stderr, exit code 2; nothing is printed on stdout.
import { readFileSync } from 'node:fs';
import { DEFAULT_ANALYTES, DEFAULT_PROTOCOLS } from '@/lib/clinical/defaults';
import { protocolSeconds } from '@/lib/clinical/protocols';
import { replayDay, type ReplayDay } from '@/lib/clinical/replay';
import { replayDaySchema } from '@/lib/validation/replay';

const USAGE = 'usage: npm run --silent match -- replay FILE.json';

function fail(message: string): never {
  process.stderr.write(`${message}\n`);
  process.exit(2);
}

const fieldPath = (path: PropertyKey[]) => path.map((p, i) => (typeof p === 'number' ? `[${p}]` : `${i ? '.' : ''}${String(p)}`)).join('') || '(the file)';

export function loadDay(text: string): ReplayDay {
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (error) {
    throw new Error(`not JSON: ${(error as Error).message}`);
  }
  const parsed = replayDaySchema.safeParse(raw);
  if (!parsed.success) throw new Error(parsed.error.issues.map((i) => `${fieldPath(i.path)}: ${i.message}`).join('\n'));
  const day = parsed.data;
  const known = new Set(DEFAULT_PROTOCOLS.map((p) => p.analyte));
  const unknown = [
    ...day.orders.map((o, i) => [`orders[${i}].analyte`, o.analyte] as const),
    ...day.readings.map((r, i) => [`readings[${i}].analyte`, r.analyte] as const),
  ].filter(([, code]) => !known.has(code));
  if (unknown.length) throw new Error(unknown.map(([f, code]) => `${f}: "${code}" has no built-in run protocol (known: ${[...known].join(', ')})`).join('\n'));
  return {
    timeZone: day.timeZone,
    instruments: day.instruments,
    patients: day.patients,
    orders: day.orders.map((o) => ({ ...o, startedAt: new Date(o.startedAt) })),
    readings: day.readings.map((r) => ({ ...r, arrivedAt: new Date(r.arrivedAt) })),
  };
}

const runSeconds = (analyte: string) => protocolSeconds(DEFAULT_PROTOCOLS.find((p) => p.analyte === analyte)!.stages);

function main(args: string[]) {
  const [command, file, ...rest] = args;
  if (command !== 'replay' || !file || rest.length) fail(USAGE);
  let text: string;
  try {
    text = readFileSync(file, 'utf8');
  } catch (error) {
    fail(`${file}: cannot read it (${(error as NodeJS.ErrnoException).code ?? (error as Error).message})`);
  }
  let day: ReplayDay;
  try {
    day = loadDay(text);
  } catch (error) {
    fail(`${file}: ${(error as Error).message}`);
  }
  const analytes = DEFAULT_ANALYTES.map((a) => ({ code: a.code, validatedSpecies: a.validatedSpecies }));
  const { lines, summary } = replayDay(day, runSeconds, analytes);
  for (const line of lines) process.stdout.write(`${JSON.stringify(line)}\n`);
  process.stdout.write(`${JSON.stringify({ summary })}\n`);
}

main(process.argv.slice(2));
