// Text inside a PNG file, so a figure carries its own sidecar: an iTXt chunk (UTF-8 text, which
// tEXt's Latin-1 cannot hold: titles and "µm" may need it) inserted before the first IDAT. Chunk
// layout and CRC per the PNG specification (W3C, "Portable Network Graphics (PNG) Specification
// (Second Edition)", 2003, sections 5.3 and 11.3.4.5; CRC-32 of ISO 3309 over type and data).
// Pixel data is copied through unchanged.

const SIGNATURE = [137, 80, 78, 71, 13, 10, 26, 10];

const CRC_TABLE = (() => {
  const table = new Uint32Array(256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
    table[n] = c >>> 0;
  }
  return table;
})();

/** CRC-32 (polynomial 0xEDB88320, reflected), as PNG chunks use it. */
export function crc32(bytes: Uint8Array): number {
  let c = 0xffffffff;
  for (let i = 0; i < bytes.length; i++) c = CRC_TABLE[(c ^ bytes[i]) & 0xff] ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

export interface PngChunk {
  type: string;
  /** Offset of the chunk's length field in the file. */
  offset: number;
  data: Uint8Array;
}

/** The chunks of a PNG file, in order; throws on a bad signature, a truncated chunk or a wrong CRC. */
export function pngChunks(png: Uint8Array): PngChunk[] {
  if (png.length < 8 || SIGNATURE.some((b, i) => png[i] !== b)) throw new Error("Not a PNG file (bad signature)");
  const view = new DataView(png.buffer, png.byteOffset, png.byteLength);
  const chunks: PngChunk[] = [];
  let at = 8;
  while (at < png.length) {
    if (at + 12 > png.length) throw new Error(`Truncated PNG chunk at byte ${at}`);
    const length = view.getUint32(at);
    if (at + 12 + length > png.length) throw new Error(`Truncated PNG chunk at byte ${at}`);
    const type = String.fromCharCode(...png.subarray(at + 4, at + 8));
    const crc = view.getUint32(at + 8 + length);
    if (crc32(png.subarray(at + 4, at + 8 + length)) !== crc) throw new Error(`Wrong CRC in PNG chunk ${type} at byte ${at}`);
    chunks.push({ type, offset: at, data: png.subarray(at + 8, at + 8 + length) });
    at += 12 + length;
    if (type === "IEND") break;
  }
  return chunks;
}

function chunk(type: string, data: Uint8Array): Uint8Array {
  const out = new Uint8Array(12 + data.length);
  const view = new DataView(out.buffer);
  view.setUint32(0, data.length);
  for (let i = 0; i < 4; i++) out[4 + i] = type.charCodeAt(i);
  out.set(data, 8);
  view.setUint32(8 + data.length, crc32(out.subarray(4, 8 + data.length)));
  return out;
}

/** Keywords are 1–79 printable Latin-1 characters without leading, trailing or double spaces (spec 11.3.4.2). */
function checkKeyword(keyword: string): void {
  if (!/^[\x21-\x7e\xa1-\xff](?:[\x21-\x7e\xa1-\xff]| (?! ))*$/.test(keyword) || keyword.length > 79 || keyword.endsWith(" ")) {
    throw new RangeError(`Not a valid PNG text keyword: "${keyword}"`);
  }
}

/** A PNG with an uncompressed iTXt chunk (keyword, UTF-8 text) inserted before its first IDAT. */
export function withTextChunk(png: Uint8Array, keyword: string, text: string): Uint8Array {
  checkKeyword(keyword);
  const chunks = pngChunks(png);
  const idat = chunks.find((c) => c.type === "IDAT");
  if (!idat) throw new Error("The PNG has no image data (IDAT)");
  const key = Uint8Array.from(keyword, (ch) => ch.charCodeAt(0));
  const body = new TextEncoder().encode(text);
  // keyword, NUL, compression flag 0, compression method 0, empty language tag + NUL, empty translated keyword + NUL, text.
  const data = new Uint8Array(key.length + 5 + body.length);
  data.set(key, 0);
  data.set([0, 0, 0, 0, 0], key.length);
  data.set(body, key.length + 5);
  const extra = chunk("iTXt", data);
  const out = new Uint8Array(png.length + extra.length);
  out.set(png.subarray(0, idat.offset), 0);
  out.set(extra, idat.offset);
  out.set(png.subarray(idat.offset), idat.offset + extra.length);
  return out;
}

/** The uncompressed iTXt and tEXt texts of a PNG, by keyword (compressed ones are skipped). */
export function readTextChunks(png: Uint8Array): Record<string, string> {
  const texts: Record<string, string> = {};
  for (const c of pngChunks(png)) {
    const nul = c.data.indexOf(0);
    if (nul < 1) continue;
    const keyword = String.fromCharCode(...c.data.subarray(0, nul));
    if (c.type === "tEXt") texts[keyword] = String.fromCharCode(...c.data.subarray(nul + 1));
    if (c.type === "iTXt" && c.data[nul + 1] === 0) {
      const langEnd = c.data.indexOf(0, nul + 3);
      const transEnd = c.data.indexOf(0, langEnd + 1);
      if (langEnd < 0 || transEnd < 0) continue;
      texts[keyword] = new TextDecoder().decode(c.data.subarray(transEnd + 1));
    }
  }
  return texts;
}
