import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { UsageError, checkBridgeOptions, loadConfigFile } from './config';
import { tempDir } from './testing/payloads';

// The config format is ours (see `npm run bridge -- run --help`); bad settings must fail at start with a message.

let dir: string;
let cleanup: () => Promise<void>;

beforeEach(async () => {
  ({ dir, cleanup } = await tempDir());
});
afterEach(() => cleanup());

async function configFile(content: unknown): Promise<string> {
  const path = join(dir, 'bridge.json');
  await writeFile(path, typeof content === 'string' ? content : JSON.stringify(content));
  return path;
}

describe('loadConfigFile', () => {
  it('reads instruments with their serial settings and takes spoolDir relative to the file', async () => {
    const path = await configFile({
      server: 'http://localhost:3000',
      spoolDir: 'spool',
      instruments: [
        { code: 'crp-reader', dialect: 'plain-printout', source: 'serial:/dev/ttyUSB0', serial: { baudRate: 19200, parity: 'even', dataBits: 7 } },
        { code: 'crp-reader-2', source: 'tcp://127.0.0.1:4001' },
      ],
    });
    expect(await loadConfigFile(path)).toEqual({
      server: 'http://localhost:3000',
      spoolDir: join(dir, 'spool'),
      instruments: [
        {
          code: 'crp-reader',
          dialect: 'plain-printout',
          source: 'serial:/dev/ttyUSB0',
          // Unset line settings take serialport's defaults.
          serial: { baudRate: 19200, parity: 'even', dataBits: 7, stopBits: 1, rtscts: false, xon: false, xoff: false },
        },
        { code: 'crp-reader-2', dialect: 'plain-printout', source: 'tcp://127.0.0.1:4001' },
      ],
    });
  });

  it('says what is wrong with a bad file', async () => {
    await expect(loadConfigFile(join(dir, 'missing.json'))).rejects.toThrow(/cannot read config/);
    await expect(loadConfigFile(await configFile('{ nope'))).rejects.toThrow(/is not valid JSON/);
    await expect(loadConfigFile(await configFile({ instruments: [] }))).rejects.toThrow(/instruments: list at least one instrument/);
    await expect(loadConfigFile(await configFile({ instruments: [{ code: 'x', source: 'file:-', baud: 9600 }] }))).rejects.toThrow(UsageError);
    await expect(loadConfigFile(await configFile({ instruments: [{ code: 'x', source: 'file:-', serial: { dataBits: 9 } }] }))).rejects.toThrow(
      /instruments\.0\.serial\.dataBits/,
    );
  });
});

describe('checkBridgeOptions', () => {
  const good = { server: 'http://localhost:3000', token: 't', spoolDir: '/tmp/s', instruments: [{ code: 'crp-reader', dialect: 'plain-printout', source: 'tcp://127.0.0.1:4001' }] };

  it('accepts a workable setup', () => {
    expect(() => checkBridgeOptions(good)).not.toThrow();
  });

  it('refuses what cannot work, saying why', () => {
    expect(() => checkBridgeOptions({ ...good, server: 'localhost:3000' })).toThrow(/server must be http/);
    expect(() => checkBridgeOptions({ ...good, server: 'not a url' })).toThrow(/is not a URL/);
    expect(() => checkBridgeOptions({ ...good, token: '' })).toThrow(/no bridge token/);
    expect(() => checkBridgeOptions({ ...good, instruments: [{ ...good.instruments[0], dialect: 'other' }] })).toThrow(/unknown dialect "other"/);
    expect(() => checkBridgeOptions({ ...good, instruments: [{ ...good.instruments[0], source: 'usb:1' }] })).toThrow(/unknown source "usb:1"/);
    expect(() => checkBridgeOptions({ ...good, instruments: [{ ...good.instruments[0], code: 'has space' }] })).toThrow(/instrument code/);
    expect(() => checkBridgeOptions({ ...good, instruments: [good.instruments[0], good.instruments[0]] })).toThrow(/listed twice/);
  });
});
