/**
 * The DejaVu Sans faces as plain TrueType, unpacked once per process from the WOFF files of
 * @fontsource/dejavu-sans. PDFKit reads WOFF directly, but its font reader inflates a
 * table again (in plain JavaScript) on every access; node:zlib unpacks each table once here
 * (WOFF 1.0, W3C Recommendation 2012, §4–5: a header, a table directory, zlib-compressed
 * tables), and PDFKit embeds a subset of the result.
 */
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { inflateSync } from 'node:zlib';

const require = createRequire(import.meta.url);

export type Face = '400-normal' | '700-normal' | '400-italic';

const cache = new Map<Face, Buffer>();


/** A WOFF 1.0 file rewritten as the sfnt (TrueType) file it wraps. */
export function woffToSfnt(woff: Buffer): Buffer {
  if (woff.toString('latin1', 0, 4) !== 'wOFF') throw new Error('not a WOFF 1.0 file');
  const flavor = woff.readUInt32BE(4);
  const numTables = woff.readUInt16BE(12);
  const tables: { tag: number; checksum: number; data: Buffer }[] = [];
  for (let i = 0; i < numTables; i++) {
    const entry = 44 + 20 * i;
    const tag = woff.readUInt32BE(entry);
    const offset = woff.readUInt32BE(entry + 4);
    const compLength = woff.readUInt32BE(entry + 8);
    const origLength = woff.readUInt32BE(entry + 12);
    const checksum = woff.readUInt32BE(entry + 16);
    const stored = woff.subarray(offset, offset + compLength);
    const data = compLength < origLength ? inflateSync(stored) : Buffer.from(stored);
    if (data.length !== origLength) throw new Error('a WOFF table did not unpack to its stated length');
    tables.push({ tag, checksum, data });
  }
  // The sfnt offset table's binary-search fields (OpenType spec, "Organization of an OpenType font").
  const count = tables.length;
  let entrySelector = 0;
  while (2 ** (entrySelector + 1) <= count) entrySelector++;
  const searchRange = 2 ** entrySelector * 16;
  const headerSize = 12 + 16 * count;
  const total = headerSize + tables.reduce((s, t) => s + Math.ceil(t.data.length / 4) * 4, 0);
  const out = Buffer.alloc(total);
  out.writeUInt32BE(flavor, 0);
  out.writeUInt16BE(count, 4);
  out.writeUInt16BE(searchRange, 6);
  out.writeUInt16BE(entrySelector, 8);
  out.writeUInt16BE(count * 16 - searchRange, 10);
  let offset = headerSize;
  tables.forEach((t, i) => {
    const record = 12 + 16 * i;
    out.writeUInt32BE(t.tag, record);
    out.writeUInt32BE(t.checksum, record + 4);
    out.writeUInt32BE(offset, record + 8);
    out.writeUInt32BE(t.data.length, record + 12);
    t.data.copy(out, offset);
    offset += Math.ceil(t.data.length / 4) * 4;
  });
  return out;
}

/** The TrueType bytes of one face, unpacked on first use. */
export function fontBytes(face: Face): Buffer {
  let bytes = cache.get(face);
  if (!bytes) {
    const path = require.resolve(`@fontsource/dejavu-sans/files/dejavu-sans-latin-${face}.woff`);
    bytes = woffToSfnt(readFileSync(path));
    cache.set(face, bytes);
  }
  return bytes;
}
