// Builds ASTM E1381 frames for tests straight from the standard's definition (LIS1-A, from memory):
// <STX> FN text <ETX|ETB> C1 C2 <CR> <LF>, checksum = sum of the bytes FN … ETX/ETB modulo 256 as
// two upper-case hex digits. Computed here byte by byte, independently of bridge/framing/astm-e1381.ts.

export const C = { STX: 0x02, ETX: 0x03, EOT: 0x04, ENQ: 0x05, ACK: 0x06, NAK: 0x15, ETB: 0x17 } as const;

export function sumChecksum(bytes: Uint8Array): string {
  let sum = 0;
  for (let i = 0; i < bytes.length; i++) sum += bytes[i];
  return (sum % 256).toString(16).toUpperCase().padStart(2, '0');
}

/** One frame; `checksum` overrides the computed one (a corrupted frame). */
export function testFrame(number: number, text: string, options: { last?: boolean; checksum?: string } = {}): Buffer {
  const body = Buffer.concat([Buffer.from(`${number}${text}`, 'latin1'), Buffer.from([options.last === false ? C.ETB : C.ETX])]);
  return Buffer.concat([Buffer.from([C.STX]), body, Buffer.from(`${options.checksum ?? sumChecksum(body)}\r\n`, 'latin1')]);
}

/** A whole session: ENQ, one frame per record (numbered 1..7,0,…), EOT. */
export function testSession(records: readonly string[]): Buffer {
  return Buffer.concat([
    Buffer.from([C.ENQ]),
    ...records.map((record, i) => testFrame((i + 1) % 8, `${record}\r`)),
    Buffer.from([C.EOT]),
  ]);
}

/** Readable form of link bytes for assertions: control characters by name. */
export function named(bytes: Buffer | readonly number[]): string {
  const names: Record<number, string> = { 0x02: '<STX>', 0x03: '<ETX>', 0x04: '<EOT>', 0x05: '<ENQ>', 0x06: '<ACK>', 0x0a: '<LF>', 0x0d: '<CR>', 0x15: '<NAK>', 0x17: '<ETB>' };
  return [...bytes].map((b) => names[b] ?? String.fromCharCode(b)).join('');
}
