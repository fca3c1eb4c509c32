import { readFile } from 'node:fs/promises';
import { dirname, resolve } from 'node:path';
import { z } from 'zod';
import { DECIMAL_MARKS } from '../lib/validation/numbers';
import { DEFAULT_DIALECT, PROFILE_DIALECT, dialectNames, findDialect } from './dialects';
import { LINE_ENCODINGS, type LineEncoding } from './framing/lines';
import type { BridgeOptions, InstrumentConfig } from './pipeline';
import { parseSourceSpec } from './sources';
import { serialSettingsSchema } from './sources/serial';

/** A setting that cannot work: the CLI prints it and exits with status 2. */
export class UsageError extends Error {}

// Instrument codes are what the server matches against Admin → Instruments.
export const instrumentCodeSchema = z
  .string()
  .regex(/^[A-Za-z0-9._:-]{1,64}$/, 'instrument code: 1–64 letters, digits or . _ : -');

const instrumentSchema = z
  .object({
    code: instrumentCodeSchema,
    dialect: z.string().default(DEFAULT_DIALECT),
    source: z.string(),
    serial: serialSettingsSchema.partial().optional(),
    encoding: z.enum(LINE_ENCODINGS as [LineEncoding, ...LineEncoding[]]).optional(),
    decimalMark: z.enum(DECIMAL_MARKS).optional(),
    application: z.string().max(64).optional(),
    facility: z.string().max(64).optional(),
  })
  .strict();

export const bridgeConfigSchema = z
  .object({
    server: z.string().optional(),
    token: z.string().optional(),
    spoolDir: z.string().min(1).optional(),
    instruments: z.array(instrumentSchema).min(1, 'list at least one instrument'),
  })
  .strict();
export type BridgeConfig = z.infer<typeof bridgeConfigSchema>;

/** Reads a JSON config; a relative spoolDir is taken relative to the config file. */
export async function loadConfigFile(path: string): Promise<BridgeConfig> {
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (error) {
    throw new UsageError(`cannot read config ${path}: ${(error as Error).message}`);
  }
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (error) {
    throw new UsageError(`config ${path} is not valid JSON: ${(error as Error).message}`);
  }
  const parsed = bridgeConfigSchema.safeParse(json);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    throw new UsageError(`config ${path}: ${issue.path.join('.') || '(top level)'}: ${issue.message}`);
  }
  const config = parsed.data;
  return config.spoolDir ? { ...config, spoolDir: resolve(dirname(path), config.spoolDir) } : config;
}

/** Checks what startBridge would trip over later, so a bad setting fails at once with a clear message. */
export function checkBridgeOptions(options: Pick<BridgeOptions, 'server' | 'token' | 'spoolDir' | 'instruments'>): void {
  let url: URL;
  try {
    url = new URL(options.server);
  } catch {
    throw new UsageError(`server "${options.server}" is not a URL (e.g. http://localhost:3000)`);
  }
  if (url.protocol !== 'http:' && url.protocol !== 'https:') throw new UsageError(`server must be http:// or https://, not ${url.protocol}`);
  if (!options.token) throw new UsageError('no bridge token: pass --token or set BENCHWIRE_BRIDGE_TOKEN');
  if (!options.spoolDir) throw new UsageError('no spool directory: pass --spool DIR');
  const seen = new Set<string>();
  for (const instrument of options.instruments) {
    checkInstrument(instrument);
    if (seen.has(instrument.code)) throw new UsageError(`instrument ${instrument.code} is listed twice`);
    seen.add(instrument.code);
  }
}

function checkInstrument(instrument: InstrumentConfig): void {
  const code = instrumentCodeSchema.safeParse(instrument.code);
  if (!code.success) throw new UsageError(`"${instrument.code}": ${code.error.issues[0].message}`);
  if (instrument.dialect === PROFILE_DIALECT) {
    if (!instrument.profile) throw new UsageError(`${instrument.code}: dialect "profile" needs a printout profile`);
  } else if (!findDialect(instrument.dialect)) {
    throw new UsageError(`${instrument.code}: unknown dialect "${instrument.dialect}" (known: ${dialectNames().join(', ')})`);
  }
  const spec = typeof instrument.source === 'string' ? parseSourceSpec(instrument.source) : instrument.source;
  if (typeof spec === 'string') throw new UsageError(`${instrument.code}: ${spec}`);
}
