import { describe, expect, it } from 'vitest';
import type { ParserOutput } from '../../lib/validation/readings';
import { astmE1394 } from '../dialects/astm-e1394';
import { hl7v2 } from '../dialects/hl7v2';
import { createParsingStages } from '../parse-stage';
import { startInstrument } from '../pipeline';
import { openTcpSource } from '../sources/tcp';
import { named, sumChecksum } from '../testing/astm';
import { spooled } from '../testing/events';
import { tempSpoolPerTest } from '../testing/spool';
import { freePort } from '../testing/server';
import { runThrough } from '../testing/streams';
import { CHEMISTRY, HEMATOLOGY } from './analytes';
import { createChemistryAnalyzer, runAstmChemistry } from './astm-chemistry';
import { createHematologyAnalyzer, runHl7Hematology } from './hl7-hematology';

// The simulated analyzers are our own invention; what they send must be what the standards say
// (frames and checksums per ASTM E1381, records per E1394, ORU^R01 per HL7 v2.5) and read back as sent.

const temp = tempSpoolPerTest();

describe('simulated chemistry analyzer', () => {
  it('sends realistic panels that the ASTM dialect reads back as sent', async () => {
    const analyzer = createChemistryAnalyzer({ seed: 9, clock: () => new Date(2026, 11, 1, 14, 3, 22) });
    for (let n = 0; n < 50; n++) {
      const message = analyzer.next();
      const parsed = [astmE1394.parse({ kind: 'record', raw: '', lines: message.records.map((text) => ({ text, raw: `${text}\r`, overlong: false })) })].flat();
      const asSent = message.results.map((r) => {
        const [, comparator, value] = /^([<>]?)(.*)$/.exec(r.value) ?? [];
        return `${r.code} ${comparator}${Number(value)} ${r.unit} ${r.flag}`;
      });
      expect(parsed.map((o) => (o.kind === 'reading' ? `${o.analyte} ${o.comparator ?? ''}${o.value} ${o.unit} ${o.flags.join('')}` : o.reason))).toEqual(asSent);
      expect(message.results.every((r) => CHEMISTRY.some((t) => t.code === r.code && t.unit === r.unit))).toBe(true);
    }
  });

  it('speaks E1381 as the sender: checksummed frames, a corrupted one repeated after the bridge NAKs it', async () => {
    const port = await freePort();
    const heard: number[] = [];
    const done = runAstmChemistry({ port, seed: 5, count: 4, everyMs: 0, corrupt: 'every message' });
    const source = openTcpSource({ instrument: 'chem', host: '127.0.0.1', port, retry: { initialMs: 5, maxMs: 50 } });
    // The analyzer's bytes on their way in; each frame's checksum is summed again here.
    source.stream.on('data', (chunk: Buffer) => heard.push(...chunk));
    const instrument = startInstrument({ code: 'chem', dialect: astmE1394, source, spool: temp.spool });
    await done;
    await instrument.stop();
    const frames = [...Buffer.from(heard).toString('latin1').matchAll(/\x02([0-7]([^\x03\x17]*)[\x03\x17])([0-9A-F]{2})\r\n/g)];
    const good = frames.filter(([, body, , checksum]) => sumChecksum(Buffer.from(body, 'latin1')) === checksum);
    expect(named(heard).startsWith('<ENQ><STX>1H|')).toBe(true);
    expect(named(heard).match(/<EOT>/g)).toHaveLength(4);
    // One bad frame per message, each followed by the same frame with the right checksum.
    expect(frames.length - good.length).toBe(4);
    const results = good.filter(([, , text]) => text.startsWith('R|'));
    expect(temp.spool.pending().map((r) => r.payload.kind)).toEqual(results.map(() => 'reading'));
  });
});

describe('simulated hematology analyzer', () => {
  it('sends ORU^R01 messages that the HL7 dialect reads back as sent', async () => {
    const analyzer = createHematologyAnalyzer({ seed: 4, clock: () => new Date(2026, 11, 1, 14, 3, 22) });
    for (let n = 0; n < 50; n++) {
      const message = analyzer.next();
      const out = await runThrough<ParserOutput>([Buffer.concat([Buffer.from([0x0b]), Buffer.from(message.text), Buffer.from([0x1c, 0x0d])])], createParsingStages(hl7v2, { idle: false }));
      expect(out.map((o) => (o.kind === 'reading' ? `${o.analyte} ${o.value} ${o.sampleId}` : o.reason))).toEqual(message.results.map((r) => `${r.code} ${Number(r.value)} ${message.sampleId}`));
      expect(HEMATOLOGY.map((t) => t.code)).toEqual(message.results.map((r) => r.code));
    }
  });

  it('connects to the bridge, sends each run and hears its ACK', async () => {
    const port = await freePort();
    const { openTcpServerSource } = await import('../sources/tcp-server');
    const source = openTcpServerSource({ instrument: 'hema', host: '127.0.0.1', port });
    const instrument = startInstrument({ code: 'hema', dialect: hl7v2, source, spool: temp.spool });
    const lines: string[] = [];
    await runHl7Hematology({ host: '127.0.0.1', port, seed: 2, count: 2, everyMs: 0, log: { info: (m) => lines.push(m), warn() {}, error() {} } });
    expect(lines.filter((l) => l.includes('ACK AA'))).toHaveLength(2);
    expect((await spooled(temp.spool, 2 * HEMATOLOGY.length)).length).toBe(2 * HEMATOLOGY.length);
    await instrument.stop();
  });
});

