import { DECIMAL_MARKS, type DecimalMark } from '../lib/validation/numbers';
import { randomInt } from 'node:crypto';
import { createReadStream, realpathSync } from 'node:fs';
import { readFile } from 'node:fs/promises';
import { resolve } from 'node:path';
import { Writable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { fileURLToPath } from 'node:url';
import { parseArgs, type ParseArgsConfig } from 'node:util';
import type { ProfileDefinition } from '../lib/validation/profile';
import type { ParserOutput } from '../lib/validation/readings';
import { UsageError, checkBridgeOptions, loadConfigFile } from './config';
import { DEFAULT_DIALECT, PROFILE_DIALECT, dialectNames, findDialect } from './dialects';
import { loadProfile, profileDialect } from './dialects/profile';
import { LINE_ENCODINGS, type LineEncoding } from './framing/lines';
import { streamLog } from './log';
import { createParsingStages } from './parse-stage';
import { BRIDGE_VERSION, type BridgeOptions, type InstrumentConfig } from './pipeline';
import { PARITIES, serialSettingsSchema, type SerialSettings } from './sources/serial';
import { parseTcpAddress } from './sources/tcp';

export { startBridge } from './pipeline';
export type { BridgeOptions, RunningBridge } from './pipeline';

// Packed (scripts/bridge-pack.ts) the bridge is started as `node bridge.cjs`, in a checkout through npm.
const PROGRAM = /\.cjs$/.test(process.argv[1] ?? '') ? 'node bridge.cjs' : 'npm run bridge --';

const USAGE = `Benchwire bridge: analyzer results from a serial line or the network into Benchwire.

Usage: ${PROGRAM} <command> [options]

Commands:
  run        read instruments, spool every record, send them to the server
  parse      show what a dialect or printout profile makes of a capture file (nothing is sent)
  simulate   invented analyzers: a CRP slip printer, an ASTM chemistry analyzer, an HL7 hematology analyzer
  ports      list serial ports
  doctor     check the serial ports, the server, the token, the clock and the spool before a run
  version    the bridge's version (also --version)

"${PROGRAM} <command> --help" tells more about each.
`;

const SERIAL_HELP = `  --baud N               baud rate (default 9600)
  --data-bits 5|6|7|8    (default 8)
  --parity P             ${PARITIES.join('|')} (default none; mark/space only on Windows)
  --stop-bits 1|1.5|2    (default 1)
  --rtscts               hardware flow control
  --xon --xoff           software flow control`;

const HELP: Record<string, string> = {
  run: `Usage: ${PROGRAM} run [options]

Instruments from the server (Admin → Instruments), followed without a restart:
  --server URL           Benchwire server (default: $BENCHWIRE_SERVER)
  --token TOKEN          bridge token (default: $BENCHWIRE_BRIDGE_TOKEN; prefer the variable,
                         a flag shows in the process list)
  --config-from-server   the default when no --instrument and no --config is given
  --spool DIR            spool directory (default ./bridge-spool); the last config from the
                         server is kept there, so the bridge runs on it while the server is away

One instrument from flags:
  --instrument CODE      the instrument's code in Admin → Instruments
  --source SOURCE        serial:/dev/ttyUSB0 (serial:COM3), tcp://host:port (the bridge connects),
                         tcp-listen://host:port (the analyzer connects), or file:PATH
  --dialect NAME         ${dialectNames().join(', ')} (default ${DEFAULT_DIALECT})
  --profile FILE         read by a printout profile (JSON) instead of a dialect
  --encoding E           ${LINE_ENCODINGS.join('|')} (default utf8; latin1 for ASTM)
${SERIAL_HELP}

Or several from a file:
  --config FILE          JSON: {"server", "token", "spoolDir",
                         "instruments": [{"code", "dialect", "source", "serial": {"baudRate",
                         "dataBits", "parity", "stopBits", "rtscts", "xon", "xoff"}, "encoding"}]}
                         (--server, --token and --spool still override it)

Every record is on disk before it is sent and stays there until the server confirmed it; every
byte received is also kept as sent in SPOOL/capture/CODE/capture.log (rotated, 5 × 10 MB).
Stop with Ctrl+C (SIGINT) or SIGTERM.
`,
  parse: `Usage: ${PROGRAM} parse [--dialect NAME | --profile FILE] [--encoding E] [--decimal-mark M] [FILE|-]

Reads FILE (or stdin) and prints one JSON object per line: readings, and
{"kind":"unparsed",...} for text that is not one. Nothing is sent, spooled or answered.
  --dialect NAME         ${dialectNames().join(', ')} (default ${DEFAULT_DIALECT})
  --profile FILE         a printout profile (JSON: the definition, or {"definition": …})
  --encoding E           ${LINE_ENCODINGS.join('|')} (default utf8; latin1 for ASTM)
  --decimal-mark M       point|comma: the instrument's number format (default point)
`,
  simulate: `Usage: ${PROGRAM} simulate [--kind KIND] [options]

Invented analyzers (demo and test data only):
  --kind crp-printer     a single-test CRP reader printing text slips (default)
  --kind astm-chemistry  a chemistry analyzer sending ASTM E1394 over E1381; needs --listen
  --kind hl7-hematology  a hematology analyzer sending HL7 ORU^R01 over MLLP; needs --connect
  --seed N               same seed, same results (default: random, printed at start)
  --count N              results to send (default 10 to stdout, otherwise unlimited)
  --every SECONDS        pause between results (default 0 to stdout, otherwise 20)
  --serial-number SN     the instrument's serial number in what it sends
Where to (crp-printer: default stdout):
  --listen PORT          serve TCP clients like a serial-to-network adapter (the bridge connects)
  --host HOST            address to listen on (default 127.0.0.1)
  --wait-for-client      crp-printer: hold the first slip until a client is connected
  --connect HOST:PORT    hl7-hematology: connect to the bridge (its tcp-listen source)
  --worklist-from URL    astm-chemistry, hl7-hematology: run only the open tests the server lists for
                         --instrument CODE (bridge token in BENCHWIRE_BRIDGE_TOKEN), not one every --every
  --serial PATH          crp-printer: write to a serial port (e.g. one end of a socat pty pair)
${SERIAL_HELP}
`,
  doctor: `Usage: ${PROGRAM} doctor [the options of run]

Checks what \`run\` with the same options needs, one line each, OK or FAIL with what to do:
the server answers (/api/health), it accepts the token (/api/bridge/config), this PC's clock is
within 5 s of the server's, the spool directory takes a file and no other bridge uses it, and each
serial port exists, may be read and written by this user and opens; a tcp:// adapter accepts a
connection, a tcp-listen:// port is free. Exits 1 if any check fails.
Run it as the account the bridge runs as (on a service: sudo -u benchwire-bridge …).
`,
  version: `Usage: ${PROGRAM} version (or --version)
`,
  ports: `Usage: ${PROGRAM} ports [--json]

Lists serial ports. Without udevadm (Linux) the details are unavailable and likely
device nodes in /dev are listed instead.
`,
};

const SERIAL_OPTIONS = {
  baud: { type: 'string' },
  'data-bits': { type: 'string' },
  parity: { type: 'string' },
  'stop-bits': { type: 'string' },
  rtscts: { type: 'boolean' },
  xon: { type: 'boolean' },
  xoff: { type: 'boolean' },
} as const satisfies ParseArgsConfig['options'];

type Values = Record<string, string | boolean | undefined>;

/** Runs one CLI command; resolves with the exit status. */
export async function main(argv: string[]): Promise<number> {
  const [command, ...rest] = argv;
  try {
    if (!command || command === '--help' || command === '-h' || command === 'help') {
      process.stdout.write(USAGE);
      return command ? 0 : 2;
    }
    if (command === '--version' || command === '-v') return versionCommand();
    if (!(command in HELP)) throw new UsageError(`unknown command "${command}"`);
    if (rest.includes('--help') || rest.includes('-h')) {
      process.stdout.write(HELP[command]);
      return 0;
    }
    switch (command) {
      case 'run':
        return await runCommand(rest);
      case 'parse':
        return await parseCommand(rest);
      case 'simulate':
        return await simulateCommand(rest);
      case 'ports':
        return await portsCommand(rest);
      case 'doctor':
        return await doctorCommand(rest);
      case 'version':
        return versionCommand();
    }
    return 2;
  } catch (error) {
    if (error instanceof UsageError) {
      process.stderr.write(`bridge ${command ?? ''}: ${error.message}\n(see ${PROGRAM} ${command && command in HELP ? `${command} ` : ''}--help)\n`);
      return 2;
    }
    process.stderr.write(`bridge ${command}: ${error instanceof Error ? error.message : String(error)}\n`);
    return 1;
  }
}

function parseFlags<const Options extends NonNullable<ParseArgsConfig['options']>>(args: string[], options: Options, allowPositionals = false) {
  try {
    return parseArgs({ args, options, allowPositionals, strict: true });
  } catch (error) {
    throw new UsageError((error as Error).message);
  }
}

function integer(values: Values, name: string, range: { min: number; max: number }): number | undefined {
  const text = values[name];
  if (text === undefined || typeof text === 'boolean') return undefined;
  const value = Number(text);
  if (!Number.isInteger(value) || value < range.min || value > range.max) {
    throw new UsageError(`--${name} must be a whole number from ${range.min} to ${range.max}, not "${text}"`);
  }
  return value;
}

function encodingOf(values: Values): LineEncoding | undefined {
  const encoding = values.encoding;
  if (encoding === undefined) return undefined;
  if (!LINE_ENCODINGS.includes(encoding as LineEncoding)) throw new UsageError(`--encoding must be ${LINE_ENCODINGS.join(' or ')}`);
  return encoding as LineEncoding;
}

function dialectOf(values: Values): string {
  const name = typeof values.dialect === 'string' ? values.dialect : DEFAULT_DIALECT;
  if (!findDialect(name)) throw new UsageError(`unknown dialect "${name}" (known: ${dialectNames().join(', ')})`);
  return name;
}

/** --baud, --data-bits, --parity, --stop-bits, --rtscts, --xon, --xoff → serial settings (only those given). */
function serialSettingsOf(values: Values): Partial<SerialSettings> {
  const given: Record<string, unknown> = {};
  if (values.baud !== undefined) given.baudRate = integer(values, 'baud', { min: 50, max: 4_000_000 });
  if (values['data-bits'] !== undefined) given.dataBits = Number(values['data-bits']);
  if (values.parity !== undefined) given.parity = values.parity;
  if (values['stop-bits'] !== undefined) given.stopBits = Number(values['stop-bits']);
  for (const flag of ['rtscts', 'xon', 'xoff'] as const) if (values[flag]) given[flag] = true;
  const parsed = serialSettingsSchema.partial().safeParse(given);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    const flag = { baudRate: 'baud', dataBits: 'data-bits', parity: 'parity', stopBits: 'stop-bits' }[String(issue.path[0])] ?? issue.path[0];
    throw new UsageError(`--${String(flag)}: ${issue.message}`);
  }
  // Keep only what was given, so a config file's settings are not overwritten by defaults.
  return Object.fromEntries(Object.keys(given).map((key) => [key, (parsed.data as Record<string, unknown>)[key]]));
}

const RUN_OPTIONS = {
  config: { type: 'string' },
  'config-from-server': { type: 'boolean' },
  server: { type: 'string' },
  token: { type: 'string' },
  instrument: { type: 'string' },
  source: { type: 'string' },
  dialect: { type: 'string' },
  profile: { type: 'string' },
  encoding: { type: 'string' },
  spool: { type: 'string' },
  ...SERIAL_OPTIONS,
} as const satisfies ParseArgsConfig['options'];

async function runCommand(args: string[]): Promise<number> {
  const { values } = parseFlags(args, RUN_OPTIONS);
  const options = await runOptions(values, process.env);
  checkBridgeOptions(options);
  // Spool, capture log and saved config hold patient data: owner-only (0700 directories, 0600 files).
  process.umask(0o077);
  const log = streamLog(process.stdout);
  const { startBridge } = await import('./pipeline');
  log.info(`bridge: spool ${options.spoolDir}, server ${options.server}${options.configFromServer ? ', instruments from the server' : ''}`);
  const bridge = await startBridge({ ...options, log });
  await new Promise<void>((done) => {
    let signals = 0;
    const onSignal = (signal: NodeJS.Signals) => {
      if (++signals > 1) process.exit(1);
      log.info(`bridge: ${signal}, stopping`);
      void bridge.stop().then(done);
    };
    process.on('SIGINT', onSignal);
    process.on('SIGTERM', onSignal);
  });
  log.info(`bridge: stopped, ${bridge.spool.depth()} record(s) waiting in the spool`);
  return 0;
}

const SINGLE_INSTRUMENT_FLAGS = ['instrument', 'source', 'dialect', 'profile', 'encoding', ...Object.keys(SERIAL_OPTIONS)];

/** Flags, then the config file, then the environment. Without --instrument or --config, the server's config. */
export async function runOptions(values: Values, env: Record<string, string | undefined>): Promise<BridgeOptions> {
  const text = (name: string) => (typeof values[name] === 'string' ? (values[name] as string) : undefined);
  let instruments: InstrumentConfig[] = [];
  let fromFile: { server?: string; token?: string; spoolDir?: string } = {};
  const given = SINGLE_INSTRUMENT_FLAGS.filter((name) => values[name] !== undefined);
  const fromServer = values['config-from-server'] === true || (!text('config') && given.length === 0);
  if (fromServer) {
    if (text('config')) throw new UsageError('--config-from-server and --config do not go together');
    if (given.length) throw new UsageError(`--${given[0]} does not go with --config-from-server; set it in Admin → Instruments`);
  } else if (text('config')) {
    const clash = given[0];
    if (clash) throw new UsageError(`--${clash} does not go with --config; set it per instrument in the file`);
    const config = await loadConfigFile(resolve(text('config') as string));
    fromFile = config;
    instruments = config.instruments;
  } else {
    const code = text('instrument');
    const source = text('source');
    if (!code) throw new UsageError('--instrument CODE is required with --source (or leave both out to take the instruments from the server)');
    if (!source) throw new UsageError('--source is required: serial:/dev/ttyUSB0, tcp://host:port, tcp-listen://host:port or file:PATH');
    if (!source.startsWith('serial:') && Object.keys(SERIAL_OPTIONS).some((name) => values[name] !== undefined)) {
      throw new UsageError('serial settings (--baud, --parity, …) only apply to a serial: source');
    }
    if (text('dialect') !== undefined && text('profile') !== undefined) throw new UsageError('--dialect and --profile do not go together');
    const profilePath = text('profile');
    const instrument: InstrumentConfig = profilePath
      ? { code, source, dialect: PROFILE_DIALECT, profile: { key: `file:${profilePath}`, version: 1, definition: await profileFile(profilePath) } }
      : { code, source, dialect: dialectOf(values) };
    instruments = [{ ...instrument, encoding: encodingOf(values), serial: serialSettingsOf(values) }];
  }
  const server = text('server') ?? fromFile.server ?? env.BENCHWIRE_SERVER;
  if (!server) throw new UsageError('no server: pass --server URL or set BENCHWIRE_SERVER');
  return {
    server,
    token: text('token') ?? fromFile.token ?? env.BENCHWIRE_BRIDGE_TOKEN ?? '',
    spoolDir: resolve(text('spool') ?? fromFile.spoolDir ?? 'bridge-spool'),
    instruments,
    ...(fromServer ? { configFromServer: true } : {}),
  };
}

async function parseCommand(args: string[]): Promise<number> {
  const { values, positionals } = parseFlags(args, { dialect: { type: 'string' }, profile: { type: 'string' }, encoding: { type: 'string' }, 'decimal-mark': { type: 'string' } }, true);
  const decimalMark = values['decimal-mark'];
  if (decimalMark !== undefined && !DECIMAL_MARKS.includes(decimalMark as DecimalMark)) throw new UsageError('--decimal-mark must be point or comma');
  if (positionals.length > 1) throw new UsageError('give one file (or - for stdin)');
  if (values.dialect !== undefined && values.profile !== undefined) throw new UsageError('--dialect and --profile do not go together');
  const file = positionals[0] ?? '-';
  const dialect = values.profile !== undefined ? profileDialect(await profileFile(values.profile)) : findDialect(dialectOf(values));
  if (!dialect) return 2;
  const input = file === '-' ? process.stdin : createReadStream(file);
  // A missing file is a bad argument: say so before anything is printed.
  if (file !== '-') {
    await new Promise<void>((resolve, reject) => {
      input.once('open', () => resolve());
      input.once('error', (error: Error) => reject(new UsageError(`cannot read ${file}: ${error.message}`)));
    });
  }
  const printer = new Writable({
    objectMode: true,
    write(output: ParserOutput, _encoding, callback) {
      process.stdout.write(`${JSON.stringify(output)}\n`, callback);
    },
  });
  await pipeline([input, ...createParsingStages(dialect, { encoding: encodingOf(values), decimalMark: decimalMark as DecimalMark | undefined, idle: false }), printer]);
  return 0;
}

/** A printout profile from a JSON file: the definition itself, or the server's {key, version, definition}. */
async function profileFile(path: string): Promise<ProfileDefinition> {
  let json: unknown;
  try {
    json = JSON.parse(await readFile(path, 'utf8'));
  } catch (error) {
    throw new UsageError(`cannot read profile ${path}: ${(error as Error).message}`);
  }
  const definition = json && typeof json === 'object' && 'definition' in json ? (json as { definition: unknown }).definition : json;
  const profile = await loadProfile(definition);
  if (!profile.ok) throw new UsageError(`profile ${path}: ${profile.message}`);
  return profile.definition;
}

const SIMULATOR_KINDS = ['crp-printer', 'astm-chemistry', 'hl7-hematology'] as const;

async function simulateCommand(args: string[]): Promise<number> {
  const { values } = parseFlags(args, {
    kind: { type: 'string' },
    seed: { type: 'string' },
    count: { type: 'string' },
    every: { type: 'string' },
    'serial-number': { type: 'string' },
    listen: { type: 'string' },
    host: { type: 'string' },
    'wait-for-client': { type: 'boolean' },
    connect: { type: 'string' },
    serial: { type: 'string' },
    'worklist-from': { type: 'string' },
    instrument: { type: 'string' },
    ...SERIAL_OPTIONS,
  });
  const kind = values.kind ?? 'crp-printer';
  if (values['worklist-from'] !== undefined && kind === 'crp-printer') throw new UsageError('--worklist-from is for astm-chemistry and hl7-hematology');
  if (values['worklist-from'] !== undefined && (!values.instrument || !process.env.BENCHWIRE_BRIDGE_TOKEN)) {
    throw new UsageError('--worklist-from needs --instrument CODE and the bridge token in BENCHWIRE_BRIDGE_TOKEN');
  }
  if (!(SIMULATOR_KINDS as readonly string[]).includes(kind)) throw new UsageError(`--kind must be ${SIMULATOR_KINDS.join(', ')}`);
  if (values.listen !== undefined && values.serial !== undefined) throw new UsageError('--listen and --serial do not go together');
  if (values.serial === undefined && Object.keys(SERIAL_OPTIONS).some((name) => values[name as keyof typeof values] !== undefined)) {
    throw new UsageError('serial settings (--baud, --parity, …) only apply with --serial PATH');
  }
  if (kind !== 'crp-printer' && (values.serial !== undefined || values['wait-for-client'])) throw new UsageError(`--serial and --wait-for-client are for the crp-printer`);
  if (kind === 'astm-chemistry' && values.listen === undefined) throw new UsageError('astm-chemistry needs --listen PORT (the bridge connects to it)');
  if (kind === 'hl7-hematology' && values.connect === undefined) throw new UsageError('hl7-hematology needs --connect HOST:PORT (the bridge listens)');
  if (kind !== 'hl7-hematology' && values.connect !== undefined) throw new UsageError('--connect is for hl7-hematology');
  if (kind === 'hl7-hematology' && values.listen !== undefined) throw new UsageError('hl7-hematology connects out; use --connect');
  const toStdout = values.listen === undefined && values.serial === undefined && values.connect === undefined;
  const every = values.every === undefined ? (toStdout ? 0 : 20) : Number(values.every);
  if (!Number.isFinite(every) || every < 0) throw new UsageError(`--every must be a number of seconds, not "${values.every}"`);
  const seed = integer(values, 'seed', { min: 0, max: 2 ** 32 - 1 }) ?? randomInt(2 ** 32 - 1);
  const count = integer(values, 'count', { min: 1, max: Number.MAX_SAFE_INTEGER }) ?? (toStdout ? 10 : undefined);
  const serialNumber = values['serial-number'];
  if (serialNumber !== undefined && !/^[\x21-\x7e]{1,32}$/.test(serialNumber)) throw new UsageError('--serial-number: 1–32 printable characters, no spaces');
  const connectTo = values.connect === undefined ? undefined : parseTcpAddress(`tcp://${values.connect}`);
  if (typeof connectTo === 'string') throw new UsageError(`--connect must be HOST:PORT, not "${values.connect}"`);

  const log = streamLog(process.stderr);
  const controller = new AbortController();
  const stop = () => controller.abort();
  process.on('SIGINT', stop);
  process.on('SIGTERM', stop);
  log.info(`simulator: seed ${seed} (pass --seed ${seed} to send the same results again)`);
  const common = { seed, count, everyMs: every * 1000, serialNumber, log, signal: controller.signal };
  const worklist =
    values['worklist-from'] !== undefined
      ? { source: (await import('./simulator/worklist')).serverWorklist(values['worklist-from'], process.env.BENCHWIRE_BRIDGE_TOKEN!, log), instrument: values.instrument! }
      : undefined;
  if (kind === 'astm-chemistry') {
    const { runAstmChemistry } = await import('./simulator/astm-chemistry');
    await runAstmChemistry({ ...common, worklist, port: integer(values, 'listen', { min: 0, max: 65535 }) ?? 0, host: values.host });
  } else if (kind === 'hl7-hematology' && connectTo) {
    const { runHl7Hematology } = await import('./simulator/hl7-hematology');
    await runHl7Hematology({ ...common, worklist, host: connectTo.host, port: connectTo.port });
  } else {
    const { runSimulator } = await import('./simulator/simulate');
    await runSimulator({
      ...common,
      target:
        values.listen !== undefined
          ? { kind: 'listen', port: integer(values, 'listen', { min: 0, max: 65535 }) ?? 0, host: values.host, waitForClient: values['wait-for-client'] }
          : values.serial !== undefined
            ? { kind: 'serial', path: values.serial, settings: serialSettingsOf(values) }
            : { kind: 'stdout' },
    });
  }
  process.off('SIGINT', stop);
  process.off('SIGTERM', stop);
  return 0;
}

async function doctorCommand(args: string[]): Promise<number> {
  const { values } = parseFlags(args, RUN_OPTIONS);
  const options = await runOptions(values, process.env);
  const { formatChecks, runDoctor } = await import('./doctor');
  const checks = await runDoctor({ ...options, program: PROGRAM });
  process.stdout.write(formatChecks(checks));
  return checks.every((check) => check.ok) ? 0 : 1;
}

function versionCommand(): number {
  process.stdout.write(`Benchwire bridge ${BRIDGE_VERSION} (Node ${process.versions.node}, ${process.platform}-${process.arch})\n`);
  return 0;
}

async function portsCommand(args: string[]): Promise<number> {
  const { values } = parseFlags(args, { json: { type: 'boolean' } });
  const { formatListing, listPorts } = await import('./ports');
  const listing = await listPorts();
  process.stdout.write(values.json ? `${JSON.stringify(listing, null, 2)}\n` : formatListing(listing));
  return 0;
}

function invokedDirectly(): boolean {
  if (!process.argv[1]) return false;
  try {
    return realpathSync(process.argv[1]) === realpathSync(fileURLToPath(import.meta.url));
  } catch {
    return false;
  }
}

if (invokedDirectly()) {
  main(process.argv.slice(2)).then((status) => {
    process.exitCode = status;
    // Keep-alive sockets and the like must not hold a stopped bridge open.
    if (process.argv[2] === 'run') setTimeout(() => process.exit(status), 2_000).unref();
  });
}
