// Throughput of the bridge's parsing stages on invented CRP slips: bytes → lines → records → readings.
// A busy clinic sends a few slips an hour; the target is headroom, not speed for its own sake:
// parsing 1,000 slips should take well under a second on the 2-core lab PC this runs on.
import { Readable, Writable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { bench, describe } from 'vitest';
import { getDialect } from '@/bridge/dialects';
import { createParsingStages } from '@/bridge/parse-stage';
import { createReader } from '@/bridge/simulator/printouts';

const reader = createReader({ seed: 7, clock: () => new Date(Date.UTC(2026, 11, 1, 9, 0, 0)) });
const slips = Buffer.from(Array.from({ length: 1000 }, () => reader.next().text).join(''), 'latin1');
// Line noise with no line ending at all: the splitter must stay bounded, not buffer it whole.
const noise = Buffer.alloc(4 * 1024 * 1024, 0x9f);

async function run(bytes: Buffer, chunk: number) {
  let outputs = 0;
  const chunks = function* () {
    for (let i = 0; i < bytes.length; i += chunk) yield bytes.subarray(i, i + chunk);
  };
  const stages = createParsingStages(getDialect('plain-printout'), { idle: false });
  const sink = new Writable({ objectMode: true, write: (_o, _e, done) => (outputs++, done()) });
  await pipeline([Readable.from(chunks()), ...stages, sink]);
  return outputs;
}

describe('plain-printout parsing', () => {
  bench('1,000 slips in 64-byte chunks (serial-sized reads)', async () => {
    await run(slips, 64);
  });
  bench('1,000 slips in 16 KiB chunks (file replay)', async () => {
    await run(slips, 16 * 1024);
  });
  bench('4 MiB of line noise without a line ending', async () => {
    await run(noise, 4096);
  });
});
