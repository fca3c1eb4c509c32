import { MockBinding, type MockPortBinding } from '@serialport/binding-mock';
import type { SerialPort } from 'serialport';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { plainPrintout } from '../dialects/plain-printout';
import { startInstrument } from '../pipeline';
import { Spool } from '../spool';
import { spooled, when } from '../testing/events';
import { tempDir } from '../testing/payloads';
import type { RetryingEvent } from './reconnecting';
import { openSerialSource, serialSettingsSchema } from './serial';

// MockBinding (@serialport/binding-mock) stands in for the OS driver: createPort() makes a port,
// emitData() is the analyzer sending bytes. The rest is the real pipeline into a real spool.

const PATH = '/dev/ttyBENCH0';
const slip = ['---- RESULT ----', 'TEST      cCRP', 'RESULT    37,4 mg/L', 'SAMPLE    A-1023', 'SN        SIM-0001', '---- END ----', ''].join('\r\n');

let dir: string;
let cleanup: () => Promise<void>;
let spool: Spool;

beforeEach(async () => {
  ({ dir, cleanup } = await tempDir());
  spool = await Spool.open(dir);
});

afterEach(async () => {
  await spool.close();
  await cleanup();
  MockBinding.reset();
});


const mockPort = (port: SerialPort) => port.port as unknown as MockPortBinding;

describe('serial source', () => {
  it('opens the port with the line settings and carries bytes through the pipeline into the spool', async () => {
    MockBinding.createPort(PATH, { echo: false, record: false });
    const source = openSerialSource({
      instrument: 'crp-reader',
      path: PATH,
      binding: MockBinding,
      settings: { baudRate: 4800, dataBits: 7, parity: 'even', stopBits: 2 },
    });
    const opened = when<[SerialPort]>(source, 'open');
    const instrument = startInstrument({ code: 'crp-reader', dialect: plainPrintout, source, spool });
    const [port] = await opened;
    expect(mockPort(port).openOptions).toMatchObject({ path: PATH, baudRate: 4800, dataBits: 7, parity: 'even', stopBits: 2, rtscts: false });
    expect(source.state()).toEqual({ state: 'open', detail: `serial:${PATH}` });

    // The analyzer sends in dribbles, as a UART does; a stray line comes first.
    const bytes = `PAPER LOW\r\n${slip}`;
    for (let at = 0; at < bytes.length; at += 7) mockPort(port).emitData(bytes.slice(at, at + 7));
    const records = await spooled(spool, 2);
    expect(records.map((record) => record.payload)).toEqual([
      { kind: 'unparsed', raw: 'PAPER LOW\r\n', reason: 'text outside any record' },
      expect.objectContaining({ kind: 'reading', analyte: 'cCRP', value: 37.4, unit: 'mg/L', sampleId: 'A-1023', raw: slip }),
    ]);
    expect(records.every((record) => record.instrument === 'crp-reader')).toBe(true);

    await instrument.stop();
    expect(source.state().state).toBe('closed');
  });

  it('spools a slip still being printed at shutdown as an unparsed fragment', async () => {
    MockBinding.createPort(PATH, { echo: false, record: false });
    const source = openSerialSource({ instrument: 'crp-reader', path: PATH, binding: MockBinding });
    const opened = when<[SerialPort]>(source, 'open');
    const instrument = startInstrument({ code: 'crp-reader', dialect: plainPrintout, source, spool });
    const [port] = await opened;
    const half = slip.slice(0, slip.indexOf('SAMPLE'));
    // Listeners run in order, so once this one fires the pipe has taken the bytes.
    const delivered = new Promise<void>((resolve) => port.on('data', () => resolve()));
    mockPort(port).emitData(half);
    await delivered;
    await instrument.stop();
    expect(spool.pending().map((record) => record.payload)).toEqual([
      { kind: 'unparsed', raw: half, reason: 'record cut short: input ended before the end line' },
    ]);
  });

  it('keeps trying to open a port that is not there yet, then reads it', async () => {
    const source = openSerialSource({ instrument: 'crp-reader', path: PATH, binding: MockBinding, retry: { initialMs: 5, maxMs: 20 } });
    const [retry] = await when<[RetryingEvent]>(source, 'retrying');
    expect(retry.reason).toMatch(/^cannot open serial:\/dev\/ttyBENCH0: .*does not exist/);
    expect(source.state()).toMatchObject({ state: 'error' });
    const opened = when<[SerialPort]>(source, 'open');
    MockBinding.createPort(PATH, { echo: false, record: false });
    await opened;
    expect(source.state().state).toBe('open');
    await source.stop();
  });
});

describe('serial settings', () => {
  // Defaults as serialport documents them: 8 data bits, no parity, 1 stop bit, no flow control.
  it('defaults to 9600 8N1 without flow control and refuses impossible settings', () => {
    expect(serialSettingsSchema.parse({})).toEqual({ baudRate: 9600, dataBits: 8, parity: 'none', stopBits: 1, rtscts: false, xon: false, xoff: false });
    expect(serialSettingsSchema.safeParse({ dataBits: 9 }).success).toBe(false);
    expect(serialSettingsSchema.safeParse({ stopBits: 3 }).success).toBe(false);
    expect(serialSettingsSchema.safeParse({ parity: 'sometimes' }).success).toBe(false);
    expect(serialSettingsSchema.parse({ parity: 'mark', stopBits: 1.5 })).toMatchObject({ parity: 'mark', stopBits: 1.5 });
  });
});
