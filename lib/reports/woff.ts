import { inflateSync } from 'node:zlib';

/**
 * WOFF 1.0 to the plain SFNT (TrueType/OpenType) font it wraps, per the W3C WOFF File Format 1.0
 * recommendation §3–§5: a 44-byte header, a 20-byte directory entry per table, each table zlib-compressed
 * when its compressed length is smaller than its original length. pdfkit embeds SFNT fonts most reliably.
 */
export function woffToSfnt(woff: Buffer): Buffer {
  if (woff.toString('latin1', 0, 4) !== 'wOFF') throw new Error('not a WOFF 1.0 font (signature is not "wOFF")');
  const flavor = woff.readUInt32BE(4);
  const numTables = woff.readUInt16BE(12);
  const tables: { tag: string; checksum: number; data: Buffer }[] = [];
  for (let i = 0; i < numTables; i++) {
    const entry = 44 + i * 20;
    const tag = woff.toString('latin1', entry, entry + 4);
    const offset = woff.readUInt32BE(entry + 4);
    const compLength = woff.readUInt32BE(entry + 8);
    const origLength = woff.readUInt32BE(entry + 12);
    const checksum = woff.readUInt32BE(entry + 16);
    const raw = woff.subarray(offset, offset + compLength);
    const data = compLength < origLength ? inflateSync(raw) : Buffer.from(raw);
    if (data.length !== origLength) throw new Error(`WOFF table ${tag}: expected ${origLength} bytes, got ${data.length}`);
    tables.push({ tag, checksum, data });
  }
  // OpenType §"Organization of an OpenType font": table records sorted by tag, tables 4-byte aligned.
  tables.sort((a, b) => (a.tag < b.tag ? -1 : a.tag > b.tag ? 1 : 0));
  const entrySelector = Math.floor(Math.log2(numTables));
  const searchRange = 2 ** entrySelector * 16;
  const headerLength = 12 + numTables * 16;
  const padded = (n: number) => (n + 3) & ~3;
  const total = tables.reduce((sum, t) => sum + padded(t.data.length), headerLength);
  const out = Buffer.alloc(total);
  out.writeUInt32BE(flavor, 0);
  out.writeUInt16BE(numTables, 4);
  out.writeUInt16BE(searchRange, 6);
  out.writeUInt16BE(entrySelector, 8);
  out.writeUInt16BE(numTables * 16 - searchRange, 10);
  let offset = headerLength;
  tables.forEach((t, i) => {
    const record = 12 + i * 16;
    out.write(t.tag, record, 'latin1');
    out.writeUInt32BE(t.checksum, record + 4);
    out.writeUInt32BE(offset, record + 8);
    out.writeUInt32BE(t.data.length, record + 12);
    t.data.copy(out, offset);
    offset += padded(t.data.length);
  });
  return out;
}
