import { describe, expect, it } from 'vitest';
import { plainPrintout } from '../dialects/plain-printout';
import { startInstrument } from '../pipeline';
import { spooled } from '../testing/events';
import { tempSpoolPerTest } from '../testing/spool';
import { dialWhenListening, freePort } from '../testing/server';
import { openTcpServerSource } from './tcp-server';

// An analyzer that connects out to the bridge: the bridge listens; the rules for a second connection are ours.

const slip = (value: string) => ['---- RESULT ----', 'TEST      cCRP', `RESULT    ${value} mg/L`, '---- END ----', ''].join('\r\n');

const temp = tempSpoolPerTest();

const dial = dialWhenListening;

describe('tcp-listen source', () => {
  it('reads the analyzer that connects, again after it reconnects, and answers on its socket', async () => {
    const port = await freePort();
    const source = openTcpServerSource({ instrument: 'hema', host: '127.0.0.1', port, retry: { initialMs: 5, maxMs: 20 } });
    const instrument = startInstrument({ code: 'hema', dialect: plainPrintout, source, spool: temp.spool });
    const first = await dial(port);
    first.end(slip('1.5'));
    const second = await dial(port);
    second.write(slip('2.5'));
    const values = (await spooled(temp.spool, 2)).map((r) => (r.payload.kind === 'reading' ? r.payload.value : null));
    expect(values).toEqual([1.5, 2.5]);
    const answered = new Promise<string>((resolve) => second.once('data', (chunk: Buffer) => resolve(chunk.toString())));
    expect(source.write(Buffer.from('ACK'))).toBe(true);
    expect(await answered).toBe('ACK');
    await instrument.stop();
    expect(source.state().state).toBe('closed');
    second.destroy();
  });

  it('lets a new connection replace the old one', async () => {
    const port = await freePort();
    const source = openTcpServerSource({ instrument: 'hema', host: '127.0.0.1', port, retry: { initialMs: 5, maxMs: 20 } });
    const instrument = startInstrument({ code: 'hema', dialect: plainPrintout, source, spool: temp.spool });
    const old = await dial(port);
    const oldClosed = new Promise((resolve) => old.once('close', resolve));
    old.write(slip('3.5'));
    await spooled(temp.spool, 1);
    const fresh = await dial(port);
    await oldClosed;
    fresh.write(slip('4.5'));
    expect((await spooled(temp.spool, 2)).map((r) => (r.payload.kind === 'reading' ? r.payload.value : null))).toEqual([3.5, 4.5]);
    await instrument.stop();
    fresh.destroy();
  });
});
