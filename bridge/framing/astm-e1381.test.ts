import fc from 'fast-check';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { C, named, sumChecksum, testFrame, testSession } from '../testing/astm';
import { splitAt } from '../testing/streams';
import { AstmLink, AstmLinkStage, astmChecksum, astmFrames, type AstmLinkOutput } from './astm-e1381';

// Checked against ASTM E1381 / CLSI LIS1-A as we know it (clause numbers from memory): frames and
// checksums are built in bridge/testing/astm.ts by summing bytes, not by the code under test.

function link(options: { reply?: boolean } = {}) {
  const outputs: AstmLinkOutput[] = [];
  const sent: number[] = [];
  const problems: string[] = [];
  const core = new AstmLink({
    emit: (output) => outputs.push(output),
    reply: options.reply === false ? undefined : (bytes) => sent.push(...bytes),
    onProblem: (message) => problems.push(message),
  });
  return { core, outputs, sent, problems, said: () => named(sent.splice(0)) };
}

const texts = (outputs: AstmLinkOutput[]) => outputs.filter((o) => o.kind === 'text').map((o) => (o.kind === 'text' ? o.text : ''));

describe('ASTM E1381 checksum', () => {
  // LIS1-A frame checksum: FN through ETX summed modulo 256, by hand for "1L|1|N<CR><ETX>":
  // 0x31+0x4C+0x7C+0x31+0x7C+0x4E+0x0D+0x03 = 516 = 0x204 → "04".
  it('matches a hand-computed frame', () => {
    expect(astmChecksum(Buffer.from('1L|1|N\r\x03', 'latin1'))).toBe('04');
    expect(testFrame(1, 'L|1|N\r').toString('latin1')).toBe('\x021L|1|N\r\x0304\r\n');
  });

  it('agrees with an independent byte sum on arbitrary text', () => {
    fc.assert(fc.property(fc.uint8Array({ maxLength: 300 }), (bytes) => {
        expect(astmChecksum(bytes)).toBe(sumChecksum(bytes));
      }));
  });

  // LIS1-A: at most 240 text characters per frame; longer text goes on in the next after ETB; FN counts 1..7, 0.
  it('frames our own messages with numbers 1..7,0 and ETB continuation', () => {
    const long = `R|1|${'x'.repeat(300)}`;
    const frames = astmFrames(['H|\\^&', long, 'A', 'B', 'C', 'D', 'E', 'L|1|N']);
    expect(frames.map((f) => String.fromCharCode(f[1]))).toEqual(['1', '2', '3', '4', '5', '6', '7', '0', '1']);
    expect(frames[1][frames[1].length - 5]).toBe(C.ETB);
    expect(frames[1].length - 7).toBe(240);
    for (const frame of frames) {
      const body = frame.subarray(1, frame.length - 4);
      expect(frame.subarray(frame.length - 4, frame.length - 2).toString()).toBe(sumChecksum(body));
    }
  });
});

describe('ASTM E1381 receiver', () => {
  // LIS1-A establishment, transfer and termination phases: ENQ → ACK, each good frame → ACK, EOT.
  it('answers ENQ and each good frame with ACK and hands up the text at ETX', () => {
    const { core, outputs, said } = link();
    core.receive(Buffer.from([C.ENQ]));
    expect(said()).toBe('<ACK>');
    core.receive(testFrame(1, 'H|\\^&\r'));
    core.receive(testFrame(2, 'L|1|N\r'));
    expect(said()).toBe('<ACK><ACK>');
    core.receive(Buffer.from([C.EOT]));
    expect(said()).toBe('');
    expect(outputs).toEqual([{ kind: 'text', text: 'H|\\^&\r' }, { kind: 'text', text: 'L|1|N\r' }, { kind: 'session-end' }]);
  });

  // LIS1-A: a frame with a bad checksum is answered NAK and the sender sends it again.
  it('NAKs a corrupted frame and accepts its retransmission once', () => {
    const { core, outputs, said, problems } = link();
    core.receive(Buffer.from([C.ENQ]));
    said();
    const good = testFrame(1, 'R|1|^^^GLU|5.2\r');
    const bad = testFrame(1, 'R|1|^^^GLU|5.2\r', { checksum: sumChecksum(good.subarray(1, good.length - 4)) === '00' ? '01' : '00' });
    core.receive(bad);
    expect(said()).toBe('<NAK>');
    expect(problems[0]).toMatch(/checksum 0[01] is wrong/);
    core.receive(good);
    expect(said()).toBe('<ACK>');
    expect(texts(outputs)).toEqual(['R|1|^^^GLU|5.2\r']);
  });

  // LIS1-A: the frame number must be one more (modulo 8) than the last accepted; a repeat of the
  // last accepted frame (our ACK was lost) is acknowledged and not kept twice (from memory).
  it('NAKs an out-of-sequence frame and ACKs a repeated one without keeping it twice', () => {
    const { core, outputs, said } = link();
    core.receive(Buffer.from([C.ENQ]));
    core.receive(testFrame(1, 'H|\\^&\r'));
    core.receive(testFrame(3, 'P|1\r'));
    core.receive(testFrame(1, 'H|\\^&\r'));
    core.receive(testFrame(2, 'P|1\r'));
    expect(said()).toBe('<ACK><ACK><NAK><ACK><ACK>');
    expect(texts(outputs)).toEqual(['H|\\^&\r', 'P|1\r']);
  });

  it('counts frames 1..7 then 0 and joins ETB frames into one text', () => {
    const { core, outputs, said } = link();
    core.receive(Buffer.from([C.ENQ]));
    for (let n = 1; n <= 9; n++) core.receive(testFrame(n % 8, `R|${n}\r`));
    core.receive(testFrame(2, 'C|1|long ', { last: false }));
    core.receive(testFrame(3, 'comment\r'));
    expect(said()).toBe('<ACK>'.repeat(12));
    expect(texts(outputs).slice(-2)).toEqual(['R|9\r', 'C|1|long comment\r']);
  });

  it('reports an EOT before the last frame as a cut-short message, with its text', () => {
    const { core, outputs } = link();
    core.receive(Buffer.concat([Buffer.from([C.ENQ]), testFrame(1, 'R|1|^^^GLU|', { last: false }), Buffer.from([C.EOT])]));
    expect(outputs).toEqual([{ kind: 'session-end', abandoned: expect.stringMatching(/EOT before its last frame/), partial: 'R|1|^^^GLU|' }]);
  });

  it('answers ENQ with NAK while it is busy, and with ACK once it is not', () => {
    let busy = true;
    const sent: number[] = [];
    const core = new AstmLink({ emit: () => {}, reply: (bytes) => sent.push(...bytes), busy: () => busy });
    core.receive(Buffer.from([C.ENQ]));
    busy = false;
    core.receive(Buffer.from([C.ENQ]));
    expect(named(sent)).toBe('<NAK><ACK>');
  });

  it('keeps bytes outside a session as a fragment', () => {
    const { core, outputs } = link();
    core.receive(Buffer.from('LINE TEST\r\n'));
    core.receive(testSession(['L|1|N']));
    expect(outputs[0]).toEqual({ kind: 'unparsed', raw: 'LINE TEST\r\n', reason: 'bytes outside an ASTM session' });
    expect(texts(outputs)).toEqual(['L|1|N\r']);
  });

  it('reads frames without answering when there is no back channel (file replay)', () => {
    const { core, outputs, sent } = link({ reply: false });
    core.receive(testSession(['H|\\^&', 'L|1|N']));
    expect(sent).toEqual([]);
    expect(texts(outputs)).toEqual(['H|\\^&\r', 'L|1|N\r']);
  });
});

describe('ASTM E1381 corners', () => {
  // LIS1-A state diagram (from memory): the receiver leaves the neutral state only on ENQ. A frame before
  // ENQ is not answered (no ACK, no NAK) and not read; its bytes go up as one fragment.
  it('neither answers nor reads a frame sent before ENQ, and keeps its bytes', () => {
    const { core, outputs, said, problems } = link();
    const frame = testFrame(1, 'R|1|^^^GLU|9.9\r');
    core.receive(Buffer.concat([frame, Buffer.from([C.EOT])]));
    expect(said()).toBe('');
    expect(outputs).toEqual([{ kind: 'unparsed', raw: `${frame.toString('latin1')}\x04`, reason: expect.stringMatching(/without ENQ first, not accepted/) }]);
    expect(problems[0]).toMatch(/without ENQ first/);
  });

  // Replay (no back channel): nobody can ask for the missing frames, so the jump is reported with the
  // text received before it, and reading goes on from the frame that arrived.
  it('reports a frame-number gap in a replay, with the text before it', () => {
    const { core, outputs } = link({ reply: false });
    core.receive(Buffer.concat([Buffer.from([C.ENQ]), testFrame(1, 'H|\\^&\r'), testFrame(2, 'R|1|^^^GLU|', { last: false }), testFrame(5, 'R|2|^^^K|4.1\r'), Buffer.from([C.EOT])]));
    expect(outputs).toEqual([
      { kind: 'text', text: 'H|\\^&\r' },
      { kind: 'gap', reason: 'frame numbers jump from 2 to 5: frames 3, 4 missing from the capture', partial: 'R|1|^^^GLU|' },
      { kind: 'text', text: 'R|2|^^^K|4.1\r' },
      { kind: 'session-end' },
    ]);
  });

  // Live: an out-of-sequence frame is NAKed (E1381 receiver requirements, from memory); when the sender
  // never repeats the one that was missing, the refused frames' text is kept with the reason.
  it('keeps refused out-of-sequence frames when the session ends without the missing one', () => {
    const { core, outputs, said } = link();
    core.receive(Buffer.concat([Buffer.from([C.ENQ]), testFrame(1, 'H|\\^&\r'), testFrame(3, 'L|1|N\r'), testFrame(3, 'L|1|N\r'), Buffer.from([C.EOT])]));
    expect(said()).toBe('<ACK><ACK><NAK><NAK>');
    expect(outputs.at(-1)).toEqual({ kind: 'session-end', abandoned: expect.stringMatching(/without frame 2; the frames after it \(3\)/), partial: 'L|1|N\r' });
  });

  it('drops a damaged frame once its good repeat arrives', () => {
    const { core, outputs } = link();
    core.receive(Buffer.concat([Buffer.from([C.ENQ]), testFrame(1, 'L|1|N\r', { checksum: '00' }), testFrame(1, 'L|1|N\r'), Buffer.from([C.EOT])]));
    expect(outputs).toEqual([{ kind: 'text', text: 'L|1|N\r' }, { kind: 'session-end' }]);
  });
});

describe('ASTM E1381 timeouts', () => {
  afterEach(() => vi.useRealTimers());

  // LIS1-A receiver timeout (from memory: 30 s after its last reply): the session is abandoned and
  // what had arrived is handed up with the reason, not dropped.
  it('abandons a stalled session after 30 s, handing up what arrived', async () => {
    vi.useFakeTimers();
    const errors: string[] = [];
    const stage = new AstmLinkStage({ reply: () => {}, log: { info() {}, warn() {}, error: (m) => errors.push(m) }, name: 'chem' });
    const seen: AstmLinkOutput[] = [];
    stage.on('data', (output: AstmLinkOutput) => seen.push(output));
    stage.write(Buffer.concat([Buffer.from([C.ENQ]), testFrame(1, 'H|\\^&\r'), testFrame(2, 'R|1|', { last: false })]));
    await vi.advanceTimersByTimeAsync(29_999);
    expect(seen.map((o) => o.kind)).toEqual(['text']);
    await vi.advanceTimersByTimeAsync(1);
    expect(seen[1]).toEqual({ kind: 'session-end', abandoned: expect.stringMatching(/no frame or EOT within 30 s/), partial: 'R|1|' });
    expect(errors).toEqual([expect.stringMatching(/^chem: session abandoned/)]);
    stage.destroy();
  });
});

describe('ASTM E1381 sender (our answers)', () => {
  // LIS1-A: between sessions the computer system may send: ENQ, wait for ACK, frames, EOT.
  it('sends a queued message after the instrument\'s EOT, frame by frame on ACK, retransmitting on NAK', () => {
    const { core, said } = link();
    core.receive(Buffer.from([C.ENQ]));
    said();
    expect(core.send(['H|\\^&', 'L|1|I'])).toBe(true);
    expect(said()).toBe('');
    core.receive(Buffer.from([C.EOT]));
    expect(said()).toBe('<ENQ>');
    core.receive(Buffer.from([C.ACK]));
    expect(said()).toBe(named(testFrame(1, 'H|\\^&\r')));
    core.receive(Buffer.from([C.NAK]));
    expect(said()).toBe(named(testFrame(1, 'H|\\^&\r')));
    core.receive(Buffer.from([C.ACK]));
    expect(said()).toBe(named(testFrame(2, 'L|1|I\r')));
    core.receive(Buffer.from([C.ACK]));
    expect(said()).toBe('<EOT>');
  });

  // LIS1-A contention (from memory): when both send ENQ, the instrument has priority.
  it('gives way when the instrument sends ENQ at the same time', () => {
    const { core, outputs, said } = link();
    core.send(['H|\\^&', 'L|1|I']);
    expect(said()).toBe('<ENQ>');
    core.receive(Buffer.from([C.ENQ]));
    expect(said()).toBe('<ACK>');
    core.receive(Buffer.concat([testFrame(1, 'L|1|N\r'), Buffer.from([C.EOT])]));
    expect(said()).toBe('<ACK><ENQ>');
    expect(texts(outputs)).toEqual(['L|1|N\r']);
  });
});

describe('ASTM E1381 receiver properties', () => {
  const run = (chunks: Buffer[]) => {
    const { core, outputs, sent } = link();
    for (const chunk of chunks) core.receive(chunk);
    core.end();
    return { outputs, sent: named(sent) };
  };
  const stream = Buffer.concat([
    Buffer.from('noise'),
    testSession(['H|\\^&', 'P|1|PT-9', 'O|1|S-1', 'R|1|^^^GLU|5.2|mmol/L', 'L|1|N']),
    Buffer.from([C.ENQ]),
    testFrame(1, 'H|\\^&\r', { checksum: '00' }),
    testFrame(1, 'H|\\^&\r'),
    Buffer.from([C.EOT]),
  ]);

  // Common practice, no source: the link's answers and output must not depend on how the OS chunked the bytes.
  it('gives the same outputs and answers however the bytes are split', () => {
    const whole = run([stream]);
    fc.assert(fc.property(fc.array(fc.nat({ max: stream.length }), { maxLength: 20 }), (cuts) => {
        expect(run(splitAt(stream, cuts))).toEqual(whole);
      }));
  });

  it('never throws on random bytes and still reads a good session after them', () => {
    const good = testSession(['H|\\^&', 'L|1|N']);
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 200 }), (noise) => {
        const { outputs } = run([Buffer.from(noise), Buffer.from([C.EOT]), good]);
        // The noise may have opened a session; the good ENQ then starts a fresh one either way.
        expect(texts(outputs).slice(-2)).toEqual(['H|\\^&\r', 'L|1|N\r']);
      }),
      { numRuns: 300 },
    );
  });
});
