import { randomBytes } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { ASTM_CONTROL_BYTES } from './framing/astm-e1381';
import { LinkHealth } from './link-health';

// UART framing (common knowledge, no single source): a receiver set to the wrong baud rate reads
// noise, and 7-bit text with a parity bit read as 8 data bits has the top bit set on about half
// its characters. Both show as control characters and bytes above 0x7F.

const text = Buffer.from('---- RESULT ----\r\nTEST      cCRP\r\nRESULT    37.4 mg/L\r\n---- END ----\r\n'.repeat(20));

/** 7 data bits + even parity bit, read as 8 data bits: the parity bit lands in bit 7. */
function asWrongParity(bytes: Buffer): Buffer {
  return Buffer.from([...bytes].map((b) => {
    let ones = 0;
    for (let v = b; v; v >>= 1) ones += v & 1;
    return ones % 2 === 1 ? b | 0x80 : b;
  }));
}

describe('LinkHealth', () => {
  it('is quiet for text, for UTF-8 and for a protocol\'s own control characters', () => {
    const health = new LinkHealth({ controlBytes: ASTM_CONTROL_BYTES });
    health.observe(text);
    health.observe(Buffer.from('µmol/L äöü '.repeat(30)));
    health.observe(Buffer.from(`\x05\x021R|1|^^^GLU|5.2\r\x03A1\r\n\x04`.repeat(30), 'latin1'));
    expect(health.status().warnings).toEqual([]);
    expect(health.status().bytesReceived).toBeGreaterThan(text.length);
  });

  it('warns about what looks like the wrong baud rate, and about wrong parity', () => {
    const noise = new LinkHealth();
    noise.observe(randomBytes(2048));
    expect(noise.status().warnings).toEqual([expect.stringMatching(/^looks like the wrong baud rate or parity \(\d+% unreadable bytes\)$/)]);
    const parity = new LinkHealth();
    parity.observe(asWrongParity(text));
    expect(parity.unreadableShare()).toBeGreaterThan(0.2);
    expect(parity.status().warnings).toHaveLength(1);
  });

  it('judges only recent bytes, so the warning clears once the line is right', () => {
    const health = new LinkHealth({ windowBytes: 512 });
    health.observe(randomBytes(512));
    expect(health.status().warnings).toHaveLength(1);
    health.observe(text.subarray(0, 512));
    expect(health.status().warnings).toEqual([]);
  });

  it('says nothing about fewer bytes than it needs to judge, and reports protocol problems for a while', () => {
    let now = new Date(2026, 11, 1, 14, 0, 0);
    const health = new LinkHealth({ now: () => now });
    health.observe(Buffer.from([0x00, 0x01, 0xff]));
    expect(health.unreadableShare()).toBeUndefined();
    health.note('frame 2: checksum 00 is wrong; NAK');
    expect(health.status()).toEqual({
      warnings: ['1 protocol problem(s) in the last 15 min, last: frame 2: checksum 00 is wrong; NAK'],
      bytesReceived: 3,
      lastByteAt: '2026-12-01T14:00:00' + health.status().lastByteAt?.slice(19),
      checksumRetransmissions: 1,
      framingErrors: 0,
    });
    now = new Date(now.getTime() + 16 * 60_000);
    expect(health.status().warnings).toEqual([]);
  });

  it('counts checksum retransmissions and other framing errors since start (E1381: a NAKed frame is repeated by the sender; from memory)', () => {
    const health = new LinkHealth();
    health.note('frame 3: checksum 1A is wrong (sum gives 1B); NAK, the sender repeats it');
    health.note('frame 4 out of sequence (expected 3); NAK, the sender repeats it');
    health.note('a frame without CR LF after its checksum; NAK, the sender repeats it');
    health.note('EOT in the middle of a frame');
    health.note('the instrument is busy (NAK to our ENQ); our answer is not sent');
    // Only a wrong sum is a checksum retransmission; a missing CR LF, a frame out of sequence and an EOT mid-frame are framing errors.
    expect(health.status()).toMatchObject({ checksumRetransmissions: 1, framingErrors: 3 });
  });
});
