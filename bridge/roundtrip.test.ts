import type { ChildProcess } from 'node:child_process';
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import type { SerialPort } from 'serialport';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { profileDefinitionSchema } from '../lib/validation/profile';
import { bridgeBatchSchema, type BridgeRecord, type ParsedReading } from '../lib/validation/readings';
import { MllpCutter } from './framing/mllp';
import { captureDirOf, startBridge, type InstrumentConfig, type RunningBridge } from './pipeline';
import { Replies } from './simulator/astm-chemistry';
import { C, named, testFrame } from './testing/astm';
import { when } from './testing/events';
import { tempDir } from './testing/payloads';
import { closePort, openAnalyzerEnd, startPtyPair, stopPtyPair } from './testing/pty';
import { dialWhenListening, freePort, keyStore, startTestServer, type TestServer } from './testing/server';

// Whole-bridge round trips over real links: a socat pseudo-terminal pair with serialport's real
// binding (ASTM E1381/E1394 and a profile-read printout), and MLLP over a loopback TCP socket.
// The analyzer's side is written here from the standards' definitions (bridge/testing/astm.ts).

let dir: string;
let cleanup: () => Promise<void>;
let socat: ChildProcess | undefined;
let server: TestServer | undefined;
let bridge: RunningBridge | undefined;
let analyzer: SerialPort | undefined;
let received: BridgeRecord[];

beforeEach(async () => {
  ({ dir, cleanup } = await tempDir());
  const store = keyStore();
  received = [];
  server = await startTestServer((request) => {
    if (request.path !== '/api/bridge/readings') return { status: 200, body: { ok: true } };
    const batch = bridgeBatchSchema.parse(request.body);
    received.push(...batch.records.filter((r) => !store.ids.has(r.key)));
    return { status: 200, body: store.answer(batch) };
  });
});

afterEach(async () => {
  await closePort(analyzer);
  await bridge?.stop();
  await stopPtyPair(socat);
  await server?.close();
  await cleanup();
  analyzer = bridge = socat = server = undefined;
});

async function bridgeOn(instrument: InstrumentConfig): Promise<RunningBridge> {
  bridge = await startBridge({ server: server?.url ?? '', token: 'bwb_roundtrip', spoolDir: join(dir, 'spool'), instruments: [instrument], uploader: { retry: { initialMs: 20, maxMs: 200 } } });
  return bridge;
}

/** Resolves once the server holds `count` records from the bridge. */
function serverHas(running: RunningBridge, count: number): Promise<BridgeRecord[]> {
  if (received.length >= count) return Promise.resolve(received);
  return when(running.uploader, 'uploaded', () => received.length >= count).then(() => received);
}

async function ptyBridge(instrument: Omit<InstrumentConfig, 'source'>): Promise<RunningBridge> {
  socat = await startPtyPair(join(dir, 'analyzer'), join(dir, 'lab-pc'));
  const running = await bridgeOn({ ...instrument, source: `serial:${join(dir, 'lab-pc')}` });
  const source = running.instruments[0].source as unknown as NodeJS.EventEmitter & { state(): { state: string } };
  if (source.state().state !== 'open') await when(source, 'open');
  analyzer = await openAnalyzerEnd(join(dir, 'analyzer'));
  return running;
}

describe('ASTM over a real pseudo-terminal pair', () => {
  it('NAKs a corrupted frame, accepts its retransmission, and posts every result of the message', async () => {
    const running = await ptyBridge({ code: 'chem-analyzer', dialect: 'astm-e1394' });
    const port = analyzer as SerialPort;
    const replies = new Replies(port);
    const sent: Buffer[] = [];
    const send = (bytes: Buffer) => {
      sent.push(bytes);
      port.write(bytes);
    };
    const answer = async () => named([(await replies.next(20_000)) ?? 0]);

    const records = ['H|\\^&|||CHEMSIM^1.0^SIM-0002', 'P|1|PT-77', 'O|1|C-5150', 'R|1|^^^GLU|5.8|mmol/L|3.9 to 7.5|N||F', 'R|2|^^^ALT|212|U/L|10 to 125|H||F', 'L|1|N'];
    // LIS1-A: ENQ → ACK; each frame → ACK, a bad checksum → NAK and the sender repeats the frame; EOT.
    send(Buffer.from([C.ENQ]));
    const said = [await answer()];
    for (let i = 0; i < records.length; i++) {
      const frame = testFrame(i + 1, `${records[i]}\r`);
      if (i === 3) {
        const corrupted = Buffer.from(frame);
        corrupted[corrupted.length - 3] ^= 0x01;
        send(corrupted);
        said.push(await answer());
      }
      send(frame);
      said.push(await answer());
    }
    send(Buffer.from([C.EOT]));
    expect(said).toEqual(['<ACK>', '<ACK>', '<ACK>', '<ACK>', '<NAK>', '<ACK>', '<ACK>', '<ACK>']);

    const records2 = await serverHas(running, 2);
    expect(records2.map((r) => r.payload)).toEqual([
      expect.objectContaining({ kind: 'reading', analyte: 'GLU', value: 5.8, unit: 'mmol/L', sampleId: 'C-5150', patientRef: 'PT-77', instrumentSerial: 'SIM-0002' }),
      expect.objectContaining({ kind: 'reading', analyte: 'ALT', value: 212, flags: ['H'], sampleId: 'C-5150' }),
    ]);
    expect(running.instruments[0].status().warnings).toEqual([expect.stringMatching(/^1 protocol problem\(s\) in the last 15 min, last: frame 4: checksum/)]);

    // Every byte the analyzer sent is in the raw capture log, as sent.
    await bridge?.stop();
    bridge = undefined;
    expect(await readFile(join(captureDirOf(join(dir, 'spool'), 'chem-analyzer'), 'capture.log'))).toEqual(Buffer.concat(sent));
  });
});

describe('a profile-defined printout over a real pseudo-terminal pair', () => {
  it('reads the printout by the profile and posts its readings and the stray text', async () => {
    const definition = await profileDefinitionSchema.parseAsync({
      analyzer: 'Invented electrolyte printer',
      record: { start: '^== ELECTROLYTES ==$', end: '^== END ==$' },
      fields: [
        { label: 'Sample', pattern: '^SAMPLE (?<sampleId>\\S+)' },
        { label: 'Result', pattern: '^(?<analyte>NA|K|CL)\\s+(?<value>[\\d.]+)\\s+(?<unit>mmol/L)(?:\\s+(?<flag>[HL]))?$', repeats: true },
      ],
    });
    const running = await ptyBridge({ code: 'lyte-printer', dialect: 'profile', profile: { key: 'p-1', version: 3, definition } });
    // CR-only line endings, as some printers send them.
    const printout = ['PRINTER READY', '== ELECTROLYTES ==', 'SAMPLE E-42', 'NA   148 mmol/L', 'K    5.9 mmol/L  H', 'CL   110 mmol/L', '== END ==', ''].join('\r');
    (analyzer as SerialPort).write(printout);
    const records = await serverHas(running, 4);
    expect(records.map((r) => (r.payload.kind === 'reading' ? `${r.payload.analyte} ${r.payload.value} ${r.payload.flags.join('')} ${r.payload.sampleId}` : r.payload.raw))).toEqual([
      'PRINTER READY\r',
      'NA 148  E-42',
      'K 5.9 H E-42',
      'CL 110  E-42',
    ]);
    expect((records[1].payload as ParsedReading).raw).toBe(printout.slice('PRINTER READY\r'.length));
  });
});

describe('a serial adapter unplugged and plugged back in', () => {
  // socat going away removes the pty, as unplugging a USB-serial adapter removes its device node.
  it('is reopened by itself, and reading goes on', async () => {
    const running = await ptyBridge({ code: 'crp-reader', dialect: 'plain-printout' });
    const slip = (value: string) => ['---- RESULT ----', 'TEST      cCRP', `RESULT    ${value} mg/L`, '---- END ----', ''].join('\r\n');
    (analyzer as SerialPort).write(slip('11.5'));
    await serverHas(running, 1);
    const source = running.instruments[0].source as unknown as NodeJS.EventEmitter;
    const lost = when(source, 'retrying');
    await closePort(analyzer);
    await stopPtyPair(socat);
    await lost;
    const reopened = when(source, 'open');
    socat = await startPtyPair(join(dir, 'analyzer'), join(dir, 'lab-pc'));
    await reopened;
    analyzer = await openAnalyzerEnd(join(dir, 'analyzer'));
    analyzer.write(slip('12.5'));
    const records = await serverHas(running, 2);
    expect(records.map((r) => (r.payload.kind === 'reading' ? r.payload.value : r.payload.reason))).toEqual([11.5, 12.5]);
  });
});

describe('HL7 v2 over MLLP on a loopback TCP socket', () => {
  it('acknowledges each message with AA and MSA-2 = MSH-10, and posts its readings', async () => {
    const port = await freePort();
    const running = await bridgeOn({ code: 'hema-analyzer', dialect: 'hl7v2', source: `tcp-listen://127.0.0.1:${port}` });
    const socket = await dialWhenListening(port);
    const cutter = new MllpCutter();
    const acks: string[][] = [];
    let gotAck: () => void = () => {};
    socket.on('data', (chunk: Buffer) => {
      for (const frame of cutter.push(chunk)) if (frame.kind === 'record') acks.push(frame.lines.map((l) => l.text));
      gotAck();
    });
    const ackCount = (n: number) => new Promise<void>((resolve) => (gotAck = () => acks.length >= n && resolve()));
    // HL7 v2.5: MSH-9 ORU^R01, MSH-10 control ID; OBR-3 filler order number; OBX-5 value, OBX-6 units.
    const message = (control: string, value: string) =>
      ['MSH|^~\\&|HEMASIM|BENCH3|||20261201140500||ORU^R01|' + control + '|P|2.5', 'PID|1||PT-5', 'OBR|1||H-9|CBC', `OBX|1|NM|WBC||${value}|10*9/L`, ''].join('\r');
    const wrap = (text: string) => Buffer.concat([Buffer.from([0x0b]), Buffer.from(text), Buffer.from([0x1c, 0x0d])]);
    const first = ackCount(1);
    socket.write(wrap(message('C-1', '12.4')));
    await first;
    const second = ackCount(2);
    socket.write(wrap(message('C-2', '7.9')));
    await second;
    expect(acks.map((ack) => ack.find((s) => s.startsWith('MSA')))).toEqual(['MSA|AA|C-1|', 'MSA|AA|C-2|']);
    expect(acks[0][0]).toMatch(/^MSH\|\^~\\&\|Benchwire\|\|HEMASIM\|BENCH3\|\d{14}\|\|ACK\^R01\^ACK\|/);
    const records = await serverHas(running, 2);
    expect(records.map((r) => r.payload)).toEqual([
      expect.objectContaining({ analyte: 'WBC', value: 12.4, sampleId: 'H-9', patientRef: 'PT-5' }),
      expect.objectContaining({ analyte: 'WBC', value: 7.9 }),
    ]);
    socket.destroy();
  });
});
